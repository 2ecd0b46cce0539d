using System.CommandLine;
using AuditSvc.Core;

namespace AuditSvc.Cli.Commands;

/// <summary>Exit status contract: 0 pass, 1 block, 2 bad input, usage or a failure of the environment, anything else a bug.</summary>
internal static class ExitCodes
{
    public const int Pass = 0;
    public const int Block = 1;
    public const int BadInput = 2;
    public const int Internal = 3;

    /// <summary>Shows the stack trace of an environment or input failure too (a bug always shows it).</summary>
    public static readonly Option<bool> Verbose = new("--verbose") { Description = "Show the full error (with stack trace) when something fails", Recursive = true };

    public static async Task<int> RunAsync(RootCommand root, string[] args)
    {
        root.Options.Add(Verbose);
        var parse = root.Parse(args);
        bool verbose = parse.Errors.Count == 0 && parse.GetValue(Verbose);
        if (parse.Errors.Count > 0)
        {
            foreach (var e in parse.Errors) Console.Error.WriteLine($"error: {e.Message}");
            Console.Error.WriteLine("Run with --help for usage.");
            return BadInput;
        }
        try
        {
            return await parse.InvokeAsync(new InvocationConfiguration { EnableDefaultExceptionHandler = false });
        }
        catch (AuditInputException e)
        {
            Console.Error.WriteLine($"error: {e.Message}");
            if (verbose) Console.Error.WriteLine(e);
            return BadInput;
        }
        catch (Exception e) when (EnvironmentErrors.Explain(e) is { } why)
        {
            Console.Error.WriteLine($"error: {why}");
            if (verbose) Console.Error.WriteLine(e);
            return BadInput;
        }
        catch (OperationCanceledException)
        {
            Console.Error.WriteLine("cancelled");
            return Internal;
        }
        catch (Exception e) when (e is not OutOfMemoryException)
        {
            // Anything else is a bug in AuditSvc, not in the input: say so, keep the trace for the report.
            Console.Error.WriteLine($"internal error (a bug in auditsvc, please report it with this text): {e}");
            return Internal;
        }
    }
}
