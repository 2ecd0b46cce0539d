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

public static class ReviewEndpoints
{
    public static RouteGroupBuilder MapReviews(this RouteGroupBuilder api)
    {
        var group = api.MapGroup("/audits/{id:guid}").WithTags("audits");
        group.MapGet("/findings", Findings).WithSummary("The audit's findings, in the order of audit.json.");
        group.MapGet("/report", Report).WithSummary("The browser report (HTML) of a finished audit, with exemplar crops.")
            .Produces(200, contentType: "text/html");
        group.MapGet("/reviews", List).WithSummary("The audit's review history, oldest first: who decided what, when, and superseded by whom.")
            .Produces<List<ReviewResponse>>().ProducesProblem(404);
        group.MapPost("/reviews", Add)
            .WithSummary("Record a decision signed by the calling key: spurious, acceptable (with a reason) or needs-data on a finding or cue; override (verdict and reason) on the audit.")
            .Produces<ReviewResponse>(201).ProducesValidationProblem().ProducesValidationProblem(422).ProducesProblem(404).ProducesProblem(409);
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
        await reviews.HistoryAsync(http.User.TeamId(), id, ct) is { } rows
            ? TypedResults.Ok(rows.Select(ReviewResponse.From).ToList())
            : NotFound(id);

    private static async Task<IResult> Add(Guid id, AddReview body, HttpContext http, ReviewStore reviews, CancellationToken ct)
    {
        var reason = body.Reason ?? body.Note ?? "";
        if (ReviewRules.Check(body.Finding, body.Cue, body.Decision, body.Verdict, reason) is { } bad) return Problem(bad);
        var review = new NewReview(http.User.KeyId(), body.Finding, body.Cue, body.Verdict, body.Decision!, reason.Trim());
        var added = await reviews.AddAsync(http.User.TeamId(), id, review, ct);
        if (added.Refusal == ReviewRefusal.AuditNotFound) return NotFound(id);
        if (ReviewRules.From(added, review) is { } refused) return Problem(refused);
        return TypedResults.Created($"/api/audits/{id}/reviews", ReviewResponse.From(added.Review!, null));
    }

    private static IResult Problem(ReviewProblem p) =>
        Results.ValidationProblem(new Dictionary<string, string[]> { [p.Field] = [p.Message] }, statusCode: p.Status,
            title: $"{p.Field}: {p.Message}", extensions: new Dictionary<string, object?> { ["field"] = p.Field });

    private static IResult NotFound(Guid id) => ProblemHandling.AuditNotFound(id);
}
