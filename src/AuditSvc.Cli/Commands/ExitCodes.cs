using System.CommandLine;
using AuditSvc.Core;

namespace AuditSvc.Cli.Commands;

/// <summary>Exit status contract: 0 pass, 1 block, 2 bad input or usage, anything else a bug.</summary>
internal static class ExitCodes
{
    public const int Pass = 0;
    public const int Block = 1;
    public const int BadInput = 2;
    public const int Internal = 3;

    public static async Task<int> RunAsync(RootCommand root, string[] args)
    {
        var parse = root.Parse(args);
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
