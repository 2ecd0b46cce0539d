using AuditSvc.Api.Auth;
using AuditSvc.Api.Engine;
using AuditSvc.Core.Gate;
using AuditSvc.Api.Hosting;
using AuditSvc.Api.Jobs;
using AuditSvc.Data.Audits;
using AuditSvc.Data.ImageSets;
using AuditSvc.Data.Models;
using Hangfire;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.AspNetCore.Mvc;
using Microsoft.AspNetCore.Routing;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Audits;

public static class AuditEndpoints
{
    private static readonly string[] Verdicts = ["pass", "block"];
    private static readonly string[] States = ["queued", "running", "merging", "done", "failed", "cancelled"];

    public static RouteGroupBuilder MapAudits(this RouteGroupBuilder api)
    {
        var group = api.MapGroup("/audits").WithTags("audits");
        group.MapPost("/", Submit).WithSummary("Queue an audit; 202 with its Location.").ProducesValidationProblem();
        group.MapGet("/", List).WithSummary("Audits of the team, newest first; filter by modelId, imageSetId, verdict (the engine's), state. `verdict` in each is the one that stands (a signed override's), `engineVerdict` the engine's.")
            .ProducesValidationProblem();
        group.MapGet("/{id:guid}", Get).WithSummary("State and progress (images done/total, rate, ETA).");
        group.MapGet("/{id:guid}/result", Result).WithSummary("audit.json, the same document the command line writes.")
            .Produces(200, contentType: "application/json");
        group.MapGet("/{id:guid}/verdict", Verdict)
            .WithSummary("The verdict that stands (a signed override's, else the engine's), the engine's verdict and the override; 409 while the audit is not done.")
            .Produces<VerdictResponse>().ProducesProblem(404).ProducesProblem(409);
        group.MapPost("/{id:guid}/cancel", Cancel);
        return api;
    }

    private static async Task<IResult> Submit(SubmitAudit body, HttpContext http, ModelStore models, ImageSetStore sets,
        AuditStore audits, IAuditEngine engine, IBackgroundJobClient queue, IOptions<ServiceOptions> options, CancellationToken ct)
    {
        var team = http.User.TeamId();
        if (body.ModelId is not { } modelId) return ProblemHandling.Field("modelId", "is required");
        if (body.ImageSetId is not { } setId) return ProblemHandling.Field("imageSetId", "is required");
        if (await models.GetAsync(team, modelId, ct) is null) return ProblemHandling.Field("modelId", $"no model {modelId} for this team");
        if (await sets.GetAsync(team, setId, ct) is not { } set) return ProblemHandling.Field("imageSetId", $"no image set {setId} for this team");
        if (body.Policy is { } p && p.ValueKind != System.Text.Json.JsonValueKind.Object)
            return ProblemHandling.Field("policy", "must be a JSON object");
        var chunkSize = body.ChunkSize ?? options.Value.ChunkSize;
        if (chunkSize is < 1 or > 1_000_000) return ProblemHandling.Field("chunkSize", "must be between 1 and 1000000");
        if (!engine.SplitsIntoChunks) chunkSize = Math.Max(1, set.ItemCount);
        var policy = body.Policy?.GetRawText() ?? "{}";
        // A bad policy is the caller's 400 now, not a failed audit later.
        PolicyFile.CheckAttributes(PolicyFile.Parse(policy, "policy"), AttributeNames(set.Attributes), "policy");

        var audit = await audits.CreateAsync(team, modelId, setId, set.ItemCount, chunkSize, policy, ct);
        if (audit is null) return ProblemHandling.Field("modelId", "model or image set is not this team's");
        try
        {
            AuditJobs.EnqueueStart(queue, audit.Id);
        }
        catch (Exception e) when (ProblemHandling.DatabaseUnavailable(e))
        {
            // The audit is stored; answering an error now would make a retrying client submit it twice. The
            // reconciler starts audits left queued (and logs it), so 202 is the truth.
        }
        return TypedResults.Accepted($"/api/audits/{audit.Id}", AuditResponse.From(audit, DateTime.UtcNow));
    }

    private static List<string> AttributeNames(string attributesJson)
    {
        using var doc = System.Text.Json.JsonDocument.Parse(attributesJson);
        return doc.RootElement.ValueKind != System.Text.Json.JsonValueKind.Array ? []
            : doc.RootElement.EnumerateArray().Select(a => a.TryGetProperty("name", out var n) ? n.GetString() ?? "" : "").ToList();
    }

    private static async Task<IResult> List(HttpContext http, AuditStore audits, ReviewStore reviews, CancellationToken ct,
        [FromQuery] Guid? modelId, [FromQuery] Guid? imageSetId, [FromQuery] string? verdict, [FromQuery] string? state,
        [FromQuery] int? limit, [FromQuery] int? offset)
    {
        if (verdict is not null && !Verdicts.Contains(verdict)) return ProblemHandling.Field("verdict", "must be pass or block");
        if (state is not null && !States.Contains(state)) return ProblemHandling.Field("state", $"must be one of {string.Join(", ", States)}");
        // Audit rows are small: a page may hold up to 1,000 of them.
        var (take, skip, problem) = Paging.Read(limit, offset, maxLimit: 1000);
        if (problem is not null) return problem;
        var team = http.User.TeamId();
        var rows = await audits.ListAsync(team, new AuditFilter(modelId, imageSetId, verdict, state, take) { Offset = skip }, ct);
        Paging.LinkNext(http, take, skip, rows.Count);
        var overrides = await reviews.OverriddenVerdictsAsync(team, rows.Where(a => a.Verdict is not null).Select(a => a.Id).ToList(), ct);
        var now = DateTime.UtcNow;
        return TypedResults.Ok(rows.Select(a => AuditResponse.From(a, now, overrides.GetValueOrDefault(a.Id))).ToList());
    }

    private static async Task<Results<Ok<AuditResponse>, ProblemHttpResult>> Get(Guid id, HttpContext http, AuditStore audits, ReviewStore reviews, CancellationToken ct)
    {
        var team = http.User.TeamId();
        if (await audits.GetAsync(team, id, ct) is not { } a) return NotFound(id);
        var overrides = a.Verdict is null ? new Dictionary<Guid, string>() : await reviews.OverriddenVerdictsAsync(team, [id], ct);
        return TypedResults.Ok(AuditResponse.From(a, DateTime.UtcNow, overrides.GetValueOrDefault(id)));
    }

    private static async Task<IResult> Result(Guid id, HttpContext http, AuditStore audits, CancellationToken ct)
    {
        var team = http.User.TeamId();
        if (await audits.ResultAsync(team, id, ct) is { } json) return TypedResults.Text(json, "application/json");
        return await audits.GetAsync(team, id, ct) is { } a ? NotDone(a) : NotFound(id);
    }

    private static async Task<IResult> Verdict(Guid id, HttpContext http, AuditStore audits, ReviewStore reviews, CancellationToken ct)
    {
        var team = http.User.TeamId();
        var a = await audits.GetAsync(team, id, ct);
        if (a is null) return NotFound(id);
        if (a.State != "done" || a.Verdict is null) return NotDone(a);
        var scores = await audits.ScoresAsync(team, id, ct);
        var effective = await reviews.EffectiveVerdictAsync(team, id, ct);
        var overridden = VerdictOverride.From(effective?.Override);
        return TypedResults.Ok(new VerdictResponse(id, overridden?.Verdict ?? a.Verdict, a.Verdict, overridden,
            scores.Select(s => new AttributeVerdict(s.Attribute, s.Leakage, s.Verdict)).ToList()));
    }

    private static async Task<IResult> Cancel(Guid id, HttpContext http, AuditStore audits, CancellationToken ct)
    {
        var a = await audits.CancelAsync(http.User.TeamId(), id, ct);
        if (a is null) return NotFound(id);
        if (a.State != "cancelled")
            return TypedResults.Problem(statusCode: 409, title: $"audit {id} already ended ({a.State})", extensions: StateOf(a));
        return TypedResults.Ok(AuditResponse.From(a, DateTime.UtcNow));
    }

    private static ProblemHttpResult NotFound(Guid id) => ProblemHandling.AuditNotFound(id);

    private static ProblemHttpResult NotDone(AuditRow a) => TypedResults.Problem(statusCode: 409,
        title: $"audit {a.Id} is {a.State}, not done", detail: a.Error, extensions: StateOf(a));

    private static Dictionary<string, object?> StateOf(AuditRow a) => new() { ["state"] = a.State };
}
