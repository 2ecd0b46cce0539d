using System.Text.Json;
using AuditSvc.Api.Auth;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Hosting;
using AuditSvc.Api.Jobs;
using AuditSvc.Data.Audits;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Routing;

namespace AuditSvc.Api.Audits;

public sealed record FindingResponse(int Ordinal, string Layer, int Unit, string Attribute, string Value,
    double? OddsRatio, double? QValue, string? Region, JsonElement Detail);

/// <summary>A reviewer's decision on an audit, or on one of its findings (by ordinal).</summary>
/// <summary>A review: of one finding (its ordinal), of one cue group (`attribute=value`), or of the audit as a whole.</summary>
public sealed record AddReview(int? Finding, string? Reviewer, string? Decision, string? Note, string? Cue = null);

public static class ReviewEndpoints
{
    public static RouteGroupBuilder MapReviews(this RouteGroupBuilder api)
    {
        var group = api.MapGroup("/audits/{id:guid}").WithTags("audits");
        group.MapGet("/findings", Findings).WithSummary("The audit's findings, in the order of audit.json.");
        group.MapGet("/report", Report).WithSummary("The browser report (HTML) of a finished audit, with exemplar crops.")
            .Produces(200, contentType: "text/html");
        group.MapGet("/reviews", List);
        group.MapPost("/reviews", Add).WithSummary("Record a reviewer's decision: confirmed, dismissed or note.").ProducesValidationProblem();
        return api;
    }

    private static async Task<IResult> Findings(Guid id, HttpContext http, ReviewStore reviews, CancellationToken ct) =>
        await reviews.FindingsAsync(http.User.TeamId(), id, ct) is { } rows
            ? TypedResults.Ok(rows.Select(f => new FindingResponse(f.Ordinal, f.Layer, f.Unit, f.Attribute, f.Value,
                f.OddsRatio, f.QValue, f.Region, JsonText.Element(f.DetailJson))).ToList())
            : NotFound(id);

    private static async Task<IResult> Report(Guid id, HttpContext http, AuditStore audits, ReportCache reports, CancellationToken ct)
    {
        var team = http.User.TeamId();
        if (await audits.ResultAsync(team, id, ct) is not { } json)
            return await audits.GetAsync(team, id, ct) is { } a
                ? TypedResults.Problem(statusCode: 409, title: $"audit {id} is {a.State}, not done", extensions: new Dictionary<string, object?> { ["state"] = a.State })
                : NotFound(id);
        return ReportFile(http, await reports.PathAsync(id, json, ct));
    }

    /// <summary>A cached report file: private to the team, revalidated by its ETag (the audit's id: a finished report never changes).</summary>
    internal static IResult ReportFile(HttpContext http, string path)
    {
        http.Response.Headers.CacheControl = "private, max-age=3600";
        return TypedResults.PhysicalFile(path, "text/html; charset=utf-8",
            entityTag: new Microsoft.Net.Http.Headers.EntityTagHeaderValue("\"" + Path.GetFileNameWithoutExtension(path) + "\""));
    }

    private static async Task<IResult> List(Guid id, HttpContext http, ReviewStore reviews, CancellationToken ct) =>
        await reviews.ListAsync(http.User.TeamId(), id, ct) is { } rows ? TypedResults.Ok(rows) : NotFound(id);

    private static async Task<IResult> Add(Guid id, AddReview body, HttpContext http, ReviewStore reviews, CancellationToken ct)
    {
        if (string.IsNullOrWhiteSpace(body.Reviewer) || body.Reviewer.Length > 200) return ProblemHandling.Field("reviewer", "is required (at most 200 characters)");
        if (body.Decision is null || !ReviewDecisions.All.Contains(body.Decision))
            return ProblemHandling.Field("decision", $"must be one of {string.Join(", ", ReviewDecisions.All)}");
        if (body.Note is { Length: > 10_000 }) return ProblemHandling.Field("note", "longer than 10000 characters");
        if (body.Finding is < 0) return ProblemHandling.Field("finding", "must be a finding's ordinal (0 or more)");
        if (body.Cue is { } cue && (cue.Length > 400 || cue.IndexOf('=', StringComparison.Ordinal) <= 0))
            return ProblemHandling.Field("cue", "must be attribute=value (at most 400 characters)");
        if (body.Cue is not null && body.Finding is not null) return ProblemHandling.Field("cue", "give a finding or a cue, not both");
        var row = await reviews.AddAsync(http.User.TeamId(), id, new NewReview(body.Finding, body.Cue, body.Reviewer, body.Decision, body.Note ?? ""), ct);
        return row is null ? NotFound(id) : TypedResults.Created($"/api/audits/{id}/reviews", row);
    }

    private static IResult NotFound(Guid id) => ProblemHandling.AuditNotFound(id);
}
