using System.Diagnostics;

namespace AuditSvc.Cli.Tests;

/// <summary>Runs the built command line (auditsvc.dll beside the tests) as its own process, as a pipeline would.</summary>
public static class CliProcess
{
    public static (int Status, string Out, string Err) Run(params string[] args) => RunWith(new Dictionary<string, string?>(), args);

    /// <param name="environment">Variables set (or, with null, removed) for the child only.</param>
    public static (int Status, string Out, string Err) RunWith(IReadOnlyDictionary<string, string?> environment, params string[] args)
    {
        var psi = new ProcessStartInfo("dotnet") { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        foreach (var (name, value) in environment)
            if (value is null) psi.Environment.Remove(name); else psi.Environment[name] = value;
        psi.ArgumentList.Add(Path.Combine(AppContext.BaseDirectory, "auditsvc.dll"));
        foreach (var a in args) psi.ArgumentList.Add(a);
        using var p = Process.Start(psi)!;
        var stdout = p.StandardOutput.ReadToEndAsync();
        var stderr = p.StandardError.ReadToEndAsync();
        // A guard against a hung child, not a timing assertion.
        if (!p.WaitForExit(TimeSpan.FromMinutes(10))) { p.Kill(true); throw new TimeoutException("auditsvc did not finish"); }
        return (p.ExitCode, stdout.Result, stderr.Result);
    }

    public static string TempDir(string name)
    {
        var dir = Path.Combine(Path.GetTempPath(), $"auditsvc-{name}-{Guid.NewGuid():N}"[..40]);
        Directory.CreateDirectory(dir);
        return dir;
    }
}
