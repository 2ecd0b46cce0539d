using System.Text;
using AuditSvc.Api.Audits;
using AuditSvc.Api.Auth;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Jobs;
using AuditSvc.Core;
using AuditSvc.Data.Audits;
using AuditSvc.Data.ImageSets;
using AuditSvc.Data.Models;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Routing;
using static AuditSvc.Api.Pages.PageHtml;

namespace AuditSvc.Api.Pages;

/// <summary>
/// <c>/ui/audits/{id}</c>: progress while the audit runs (the page refreshes itself), and once it is done the verdict
/// and reasons, the engine's HTML report with its exemplar crops, and the review panel.
/// </summary>
internal static class AuditPage
{
    private const int RefreshSeconds = 4;

    public static RouteGroupBuilder MapAuditPage(this RouteGroupBuilder ui)
    {
        ui.MapGet("/audits/{id:guid}", ShowAsync);
        ui.MapPost("/audits/{id:guid}/reviews", ReviewPanel.PostAsync);
        return ui;
    }

    private static async Task<IResult> ShowAsync(Guid id, HttpContext http, AuditStore audits, ModelStore models, ImageSetStore sets,
        ReviewStore reviews, AuditInputsLoader loader, IAuditEngine engine, CancellationToken ct)
    {
        var team = http.User.TeamId();
        if (await audits.GetAsync(team, id, ct) is not { } row)
            return Message(http, 404, "Audit not found", $"No audit {id} for this team.", "/ui/audits");
        var a = AuditResponse.From(row, DateTime.UtcNow);
        var model = await models.GetAsync(team, row.ModelId, ct);
        var set = await sets.GetAsync(team, row.ImageSetId, ct);

        var sb = new StringBuilder(256 * 1024);
        sb.Append("<div class=\"page\"><p class=\"small\"><a href=\"/ui/audits\">← Audits</a></p>")
          .Append("<h1>Audit <span class=\"mono\">").Append(a.Id).Append("</span></h1>\n<dl class=\"grid tight\">")
          .Append("<dt>Model</dt><dd>").Append(E(model?.Name ?? row.ModelId.ToString())).Append("</dd>")
          .Append("<dt>Image set</dt><dd>").Append(E(set?.Name ?? row.ImageSetId.ToString())).Append("</dd>")
          .Append("<dt>Created</dt><dd>").Append(Time(a.CreatedAt)).Append("</dd>");
        if (a.FinishedAt is { } finished) sb.Append("<dt>Finished</dt><dd>").Append(Time(finished)).Append("</dd>");
        sb.Append("<dt>State</dt><dd><span class=\"tag\" id=\"state\">").Append(E(a.State)).Append("</span></dd></dl>\n");

        var active = a.State is "queued" or "running" or "merging";
        if (a.State != "done" || a.Verdict is null)
        {
            Progress(sb, a, active);
            sb.Append("</div>\n");
            return Html(Page(http, $"Audit {a.State}", sb.ToString(), active ? RefreshSeconds : null));
        }

        var findings = await reviews.FindingsAsync(team, id, ct) ?? [];
        var recorded = await reviews.ListAsync(team, id, ct) ?? [];
        Headline(sb, a.Verdict, await audits.ScoresAsync(team, id, ct), findings.Count, recorded.Count);
        sb.Append("</div>\n");
        await ReportAsync(sb, id, team, audits, loader, engine, ct);
        ReviewPanel.Render(sb, http, id, findings, recorded);
        return Html(Page(http, $"Audit {a.Verdict}", sb.ToString()));
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

    private static void Headline(StringBuilder sb, string verdict, IReadOnlyList<AttributeScoreRow> scores, int findings, int reviews)
    {
        sb.Append("<div class=\"headline\"><span class=\"pill ").Append(VerdictClass(verdict)).Append("\" id=\"page-verdict\" style=\"font-size:20px;padding:4px 16px\">")
          .Append(E(verdict)).Append("</span>");
        var blocking = scores.Where(s => s.Verdict == "block").ToList();
        if (blocking.Count == 0) sb.Append("<span>No attribute outside the policy reached its leakage threshold.</span>");
        else
        {
            sb.Append("<ul class=\"reasons-top\">");
            foreach (var s in blocking)
                sb.Append("<li><strong>").Append(E(s.Attribute)).Append("</strong>: leakage ").Append(Num(s.Leakage, "0.00")).Append("</li>");
            sb.Append("</ul>");
        }
        sb.Append("<a href=\"#review\">Review panel: ").Append(findings).Append(findings == 1 ? " finding, " : " findings, ")
          .Append(reviews).Append(reviews == 1 ? " review" : " reviews").Append(" ↓</a></div>\n");
    }

    private static async Task ReportAsync(StringBuilder sb, Guid id, Guid team, AuditStore audits, AuditInputsLoader loader, IAuditEngine engine,
        CancellationToken ct)
    {
        if (await audits.ResultAsync(team, id, ct) is not { } json) return;
        string html;
        try
        {
            html = await ReviewEndpoints.RenderReportAsync(id, json, loader, engine, ct);
        }
        catch (Exception e) when (e is AuditInputException or IOException)
        {
            // The verdict above still stands; only the drawing of the evidence failed (e.g. images moved away).
            sb.Append("<div class=\"page\"><p class=\"error\">The report could not be drawn: ").Append(E(e.Message)).Append("</p></div>\n");
            return;
        }
        sb.Append("<div id=\"report\">\n");
        if (BodyOf(html) is { } body) sb.Append(body);
        else
            // Not the engine's usual page shape: show it whole, sandboxed, rather than guess where it starts.
            sb.Append("<div class=\"page\"><iframe title=\"report\" sandbox style=\"width:100%;height:80vh;border:1px solid var(--line)\" srcdoc=\"")
              .Append(E(html)).Append("\"></iframe></div>");
        sb.Append("</div>\n");
    }

    /// <summary>The inside of the report's body element: the page already carries the same style sheet.</summary>
    internal static string? BodyOf(string html)
    {
        var open = html.IndexOf("<body", StringComparison.OrdinalIgnoreCase);
        if (open < 0) return null;
        var start = html.IndexOf('>', open);
        var end = html.LastIndexOf("</body>", StringComparison.OrdinalIgnoreCase);
        return start < 0 || end <= start ? null : html[(start + 1)..end];
    }
}
