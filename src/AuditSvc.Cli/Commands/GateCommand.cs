using System.CommandLine;
using AuditSvc.Api.Gate;
using AuditSvc.Core;

namespace AuditSvc.Cli.Commands;

/// <summary>
/// `auditsvc gate --server URL --audit ID`: prints the verdict that stands (and the engine's beside it when a reviewer
/// overrode it); exit 0 pass, 1 block, 2 usage, 4 not decided (3 stays an internal error).
/// </summary>
internal static class GateCommand
{
    public const int NotDecided = 4;

    public static Command Create()
    {
        var server = new Option<string>("--server") { Description = "the service's base URL", Required = true };
        var audit = new Option<Guid>("--audit") { Description = "audit id", Required = true };
        var key = new Option<string?>("--key") { Description = "API key (default: AUDITSVC_KEY)" };
        var wait = new Option<int>("--wait") { Description = "seconds to wait while the audit runs (0: ask once)", DefaultValueFactory = _ => 0 };
        var cmd = new Command("gate", "release gate: print an audit's verdict and exit 0 on pass, 1 on block") { server, audit, key, wait };
        cmd.SetAction(async (parse, ct) =>
        {
            var apiKey = parse.GetValue(key) ?? Environment.GetEnvironmentVariable("AUDITSVC_KEY");
            if (string.IsNullOrWhiteSpace(apiKey)) throw new AuditInputException("--key", "no API key: pass --key or set AUDITSVC_KEY");
            var seconds = parse.GetValue(wait);
            if (seconds < 0) throw new AuditInputException("--wait", "must be 0 or more seconds");
            if (!Uri.TryCreate(parse.GetValue(server), UriKind.Absolute, out var url) || url.Scheme is not ("http" or "https"))
                throw new AuditInputException("--server", $"'{parse.GetValue(server)}' is not an http(s) URL");
            var client = GateClient.Create(url, apiKey);
            var answer = await client.AskAsync(parse.GetValue(audit), TimeSpan.FromSeconds(seconds), TimeSpan.FromSeconds(2), ct);
            if (answer.Verdict is not { } v)
            {
                Console.Error.WriteLine($"audit {parse.GetValue(audit)} is {answer.State}{(answer.Detail is null ? "" : $": {answer.Detail}")}; no verdict");
                return NotDecided;
            }
            foreach (var line in GateReport.Lines(v)) Console.WriteLine(line);
            // The exit status follows the verdict that stands: a signed override with its reason is a release decision.
            return v.Verdict == "pass" ? ExitCodes.Pass : ExitCodes.Block;
        });
        return cmd;
    }
}
