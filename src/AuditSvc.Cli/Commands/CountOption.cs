using System.CommandLine;

namespace AuditSvc.Cli.Commands;

/// <summary>Counts from the command line stay within bounds: a usage error (exit 2) names the option and its range.</summary>
internal static class CountOption
{
    /// <summary>Threads: 0 (choose) up to the machine's cores; more only slows a CPU-bound pass and can exhaust the machine.</summary>
    public static Option<int> Threads(this Option<int> option) => option.Within(0, Environment.ProcessorCount, "0 = all cores; at most the machine's cores");

    /// <summary>Images per model run: 0 (choose) up to 1024.</summary>
    public static Option<int> Batch(this Option<int> option) => option.Within(0, 1024, "0 = the pass chooses");

    public static Option<int> Within(this Option<int> option, int min, int max, string note)
    {
        option.Validators.Add(result =>
        {
            if (result.Tokens.Count == 0) return;
            var v = result.GetValueOrDefault<int>();
            if (v < min || v > max) result.AddError($"{option.Name}: {v} is out of range; give {min} to {max} ({note})");
        });
        return option;
    }
}
