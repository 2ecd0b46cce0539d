using System.Globalization;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Audits;
using AuditSvc.Api.Hosting;
using AuditSvc.Core;

namespace AuditSvc.Api.Gate;

/// <summary>What the release gate learned: the verdict when the audit is done, else its state.</summary>
public sealed record GateAnswer(string State, VerdictResponse? Verdict, string? Detail);

/// <summary>What `auditsvc gate` prints for a verdict: the verdict that stands, and, when a reviewer overrode the
/// engine, the engine's verdict beside it with the override's signer, time and reason.</summary>
public static class GateReport
{
    public static IReadOnlyList<string> Lines(VerdictResponse v)
    {
        ArgumentNullException.ThrowIfNull(v);
        var lines = new List<string>();
        if (v.Override is { } o)
        {
            lines.Add($"verdict: {v.Verdict} (overridden; engine verdict: {v.EngineVerdict})");
            lines.Add($"  override by {Plain(o.Reviewer)} at {o.CreatedAt.ToUniversalTime():yyyy-MM-dd HH:mm:ss}Z: {Plain(o.Reason)}");
        }
        else lines.Add($"verdict: {v.Verdict}");
        foreach (var a in v.Attributes)
            lines.Add(string.Create(CultureInfo.InvariantCulture, $"  {Plain(a.Attribute)}: leakage {a.Leakage:0.###} ({a.Verdict})"));
        return lines;
    }

    // Reasons and names are user text: no control characters (terminal escapes, line breaks) reach the pipeline's log.
    private static string Plain(string s) => string.Concat(s.Select(c => char.IsControl(c) ? ' ' : c));
}

/// <summary>
/// The release gate's side of the REST contract: asks an audit's verdict, optionally waiting while it runs.
/// A pipeline step calls it through `auditsvc gate --server URL --audit ID`.
/// </summary>
public sealed class GateClient(HttpClient http)
{
    public static GateClient Create(Uri server, string key)
    {
        var http = new HttpClient { BaseAddress = server, Timeout = TimeSpan.FromSeconds(100) };
        http.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return new GateClient(http);
    }

    /// <param name="wait">How long to keep asking while the audit is queued or running; zero asks once.</param>
    public async Task<GateAnswer> AskAsync(Guid auditId, TimeSpan wait, TimeSpan poll, CancellationToken ct)
    {
        var until = DateTime.UtcNow + wait;
        while (true)
        {
            using var response = await http.GetAsync($"api/audits/{auditId}/verdict", ct);
            switch (response.StatusCode)
            {
                case HttpStatusCode.OK:
                    var verdict = await response.Content.ReadFromJsonAsync<VerdictResponse>(ApiJson.Options, ct);
                    return new GateAnswer("done", verdict, null);
                case HttpStatusCode.Unauthorized:
                    throw new AuditInputException("--key", "the server refused the API key (AUDITSVC_KEY)");
                case HttpStatusCode.NotFound:
                    throw new AuditInputException("--audit", $"no audit {auditId} visible to this key's team");
                case HttpStatusCode.Conflict:
                    var problem = await response.Content.ReadFromJsonAsync<JsonElement>(ct);
                    var state = problem.TryGetProperty("state", out var s) ? s.GetString() ?? "unknown" : "unknown";
                    var detail = problem.TryGetProperty("detail", out var d) ? d.GetString() : null;
                    var ended = state is "failed" or "cancelled";
                    if (ended || DateTime.UtcNow + poll > until) return new GateAnswer(state, null, detail);
                    await Task.Delay(poll, ct);
                    break;
                case HttpStatusCode.Forbidden:
                    throw new AuditInputException("--key", "the server does not let this API key read audits");
                default:
                    // The service is there but unwell (5xx) or not the service (another answer): not a bug of the gate.
                    throw new AuditInputException("--server", $"the service answered {(int)response.StatusCode} {response.ReasonPhrase}: check its log and GET /health, then retry");
            }
        }
    }
}
