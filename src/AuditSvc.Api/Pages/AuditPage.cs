using System.Text;
using AuditSvc.Api.Audits;
using AuditSvc.Api.Auth;
using AuditSvc.Core;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Reporting;
using AuditSvc.Data.Audits;
using AuditSvc.Data.ImageSets;
using AuditSvc.Data.Models;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Routing;
using static AuditSvc.Api.Pages.PageHtml;

namespace AuditSvc.Api.Pages;

/// <summary>
/// <c>/ui/audits/{id}</c>: progress while the audit runs (the page refreshes itself); once it is done, the decision
/// view (verdict once, one card per cue with its review control), the history of decisions, and links to the unit
/// pages and the full report. Pictures are linked, cut on request and cached by the browser.
/// </summary>
internal static class AuditPage
{
    private const int RefreshSeconds = 4;

    public static RouteGroupBuilder MapAuditPage(this RouteGroupBuilder ui)
    {
        ui.MapGet("/audits/{id:guid}", ShowAsync);
        ui.MapPost("/audits/{id:guid}/reviews", ReviewPanel.PostAsync);
        ui.MapGet("/audits/{id:guid}/units/{unit:int}", UnitPage.ShowAsync);
        ui.MapGet("/audits/{id:guid}/exemplars/{item:int}", UnitPage.ExemplarAsync);
        ui.MapGet("/audits/{id:guid}/report", FullReportAsync);
        return ui;
    }

    private static async Task<IResult> ShowAsync(Guid id, HttpContext http, AuditStore audits, ModelStore models, ImageSetStore sets,
        ReviewStore reviews, ParsedResults results, CancellationToken ct)
    {
        var team = http.User.TeamId();
        if (await audits.GetAsync(team, id, ct) is not { } row)
            return Message(http, 404, "Audit not found", $"No audit {id} for this team.", "/ui/audits");
        var a = AuditResponse.From(row, DateTime.UtcNow);
        var model = await models.GetAsync(team, row.ModelId, ct);
        var set = await sets.GetAsync(team, row.ImageSetId, ct);
        var title = $"{model?.Name ?? "model"} on {set?.Name ?? "image set"}";

        var sb = new StringBuilder(64 * 1024);
        sb.Append("<div class=\"page\"><p class=\"crumbs small\"><a href=\"/ui/audits\">Audits</a> / ").Append(E(title)).Append("</p>")
          .Append("<h1>").Append(E(model?.Name ?? row.ModelId.ToString())).Append(" <span class=\"muted\">on</span> ").Append(E(set?.Name ?? row.ImageSetId.ToString()))
          .Append("</h1>\n<p class=\"meta small\">audit <span class=\"mono\">").Append(a.Id).Append("</span> · created ").Append(Time(a.CreatedAt));
        if (a.FinishedAt is { } finished) sb.Append(" · finished ").Append(Time(finished));
        sb.Append(" · state <span id=\"state\">").Append(E(a.State)).Append("</span></p>\n");

        var active = a.State is "queued" or "running" or "merging";
        if (a.State != "done" || a.Verdict is null || await results.GetAsync(audits, team, id, ct) is not { } parsed)
        {
            Progress(sb, a, active);
            sb.Append("</div>\n");
            return Html(Page(http, $"{title} · {a.State}", sb.ToString(), active ? RefreshSeconds : null));
        }
        sb.Append("</div>\n");

        // One read of the reviews serves the cards, the history and the override.
        var history = await reviews.HistoryAsync(team, id, ct) ?? [];
        var recorded = history.Select(h => h.Review).ToList();
        var overridden = ReviewStore.LatestOverride(recorded);
        Guid? just = Guid.TryParse(http.Request.Query["recorded"], out var r) ? r : null;
        var token = PageForms.TokenField(http);
        if (overridden is not null) CueReview.OverrideNotice(sb, overridden, a.Verdict, just);
        var result = parsed.Result;
        if (result is null)
        {
            // A result without the engine's details (a stand-in engine, or a document from elsewhere): the verdict alone.
            sb.Append("<div class=\"page\"><p class=\"notice\">Verdict: <strong>").Append(E(a.Verdict)).Append("</strong>. ")
              .Append("This audit's result carries no cue details to show.</p></div>\n");
        }
        else
        {
            var view = new ReportView
            {
                UnitHref = (layer, unit) => UnitPage.Href(id, layer, unit),
                CardFooter = card => CueReview.Footer(card, id, token, recorded, just, result),
            };
            sb.Append("<div class=\"decision-view\">").Append(HtmlReport.Decision(result, new LinkedExemplars(id), view)).Append("</div>\n");
        }
        sb.Append("<div class=\"page\">");
        CueReview.History(sb, history, just);
        CueReview.OverrideForm(sb, id, token, a.Verdict);
        sb.Append("<p class=\"more-links\"><a href=\"/ui/audits/").Append(id).Append("/report\">The full report</a> (every finding, place pattern, group accuracy, ")
          .Append("problem and the policy; one self-contained file) · <a href=\"/api/audits/").Append(id).Append("/findings\">findings as JSON</a></p></div>\n");
        return Html(Page(http, $"{title} · {overridden?.Verdict ?? a.Verdict}", sb.ToString()));
    }

    /// <summary>The engine's audit.json, or null when the stored result is not one (it lacks the parts the pages draw).</summary>
    internal static AuditResult? TryRead(string json)
    {
        try
        {
            var result = AuditJson.Deserialize(json);
            return result is { Attributes: not null, Findings: not null, CueGroups: not null, Candidates: not null, Groups: not null, Model: not null, ImageSet: not null, Coverage: not null, Reasons: not null, Policy: not null }
                ? result : null;
        }
        catch (Exception e) when (e is System.Text.Json.JsonException or AuditInputException)
        {
            return null; // AuditJson refuses documents it did not write (no schema_version): show the verdict alone
        }
    }

    private static async Task<IResult> FullReportAsync(Guid id, HttpContext http, AuditStore audits, ReportCache reports, CancellationToken ct)
    {
        var team = http.User.TeamId();
        if (await audits.ResultAsync(team, id, ct) is not { } json)
            return Message(http, 404, "Report not found", $"No finished audit {id} for this team.", "/ui/audits");
        try
        {
            return ReviewEndpoints.ReportFile(http, await reports.PathAsync(id, json, ct));
        }
        catch (Exception e) when (e is AuditInputException or IOException)
        {
            // The verdict stands; only the drawing of the evidence failed (e.g. the images were moved away).
            return Message(http, 409, "Report not drawn", "The report could not be drawn: " + e.Message, $"/ui/audits/{id}");
        }
    }

    private static void Progress(StringBuilder sb, AuditResponse a, bool active)
    {
        var p = a.Progress;
        var share = p.ItemsTotal > 0 ? (double)p.ItemsDone / p.ItemsTotal : 0;
        sb.Append("<section id=\"progress\"><h2>Progress</h2>")
          .Append("<div class=\"progress\" role=\"progressbar\" aria-valuemin=\"0\" aria-valuemax=\"").Append(p.ItemsTotal)
          .Append("\" aria-valuenow=\"").Append(p.ItemsDone).Append("\"><span style=\"width:").Append(Num(share * 100, "0.#")).Append("%\"></span></div>\n")
          .Append("<dl class=\"grid tight\"><dt>Images</dt><dd id=\"images\">").Append(Int(p.ItemsDone)).Append(" of ").Append(Int(p.ItemsTotal))
          .Append(" (").Append(Num(share * 100, "0")).Append("%)</dd>")
          .Append("<dt>Chunks</dt><dd>").Append(Int(p.ChunksDone)).Append(" of ").Append(Int(p.ChunksTotal)).Append("</dd>")
          .Append("<dt>Rate</dt><dd>").Append(p.ItemsPerSecond is { } r ? Num(r, "0.#") + " images/s" : "—").Append("</dd>")
          .Append("<dt>Time left</dt><dd>").Append(p.EtaSeconds is { } eta ? "about " + Duration(eta) : "—").Append("</dd></dl>\n");
        if (a.State == "merging") sb.Append("<p class=\"notice\">Every image is scored; the analysis and interventions are running.</p>\n");
        if (a.State == "failed") sb.Append("<p class=\"error\">The audit failed: ").Append(E(a.Error ?? "no message")).Append("</p>\n");
        if (a.State == "cancelled") sb.Append("<p class=\"notice\">The audit was cancelled.</p>\n");
        if (active) sb.Append("<p class=\"muted small\">This page reloads every ").Append(RefreshSeconds).Append(" seconds until the audit ends.</p>\n");
        sb.Append("</section>\n");
    }
}
