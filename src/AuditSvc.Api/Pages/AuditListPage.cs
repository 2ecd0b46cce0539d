using System.Text;
using AuditSvc.Api.Audits;
using AuditSvc.Api.Auth;
using AuditSvc.Data.Audits;
using AuditSvc.Data.ImageSets;
using AuditSvc.Data.Models;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Routing;
using static AuditSvc.Api.Pages.PageHtml;

namespace AuditSvc.Api.Pages;

/// <summary><c>/ui/audits?verdict=&amp;state=</c>: the team's audits, newest first.</summary>
internal static class AuditListPage
{
    private static readonly string[] Verdicts = ["pass", "block"];
    private static readonly string[] States = ["queued", "running", "merging", "done", "failed", "cancelled"];
    private const int Limit = 200;

    public static RouteGroupBuilder MapAuditList(this RouteGroupBuilder ui)
    {
        ui.MapGet("/audits", ShowAsync);
        return ui;
    }

    private static async Task<IResult> ShowAsync(HttpContext http, AuditStore audits, ModelStore models, ImageSetStore sets,
        string? verdict, string? state, CancellationToken ct)
    {
        verdict = string.IsNullOrEmpty(verdict) ? null : verdict;
        state = string.IsNullOrEmpty(state) ? null : state;
        if (verdict is not null && !Verdicts.Contains(verdict))
            return Message(http, 400, "Audits", "verdict must be pass or block.", "/ui/audits");
        if (state is not null && !States.Contains(state))
            return Message(http, 400, "Audits", $"state must be one of {string.Join(", ", States)}.", "/ui/audits");

        var team = http.User.TeamId();
        var rows = await audits.ListAsync(team, new AuditFilter(Verdict: verdict, State: state, Limit: Limit), ct);
        var modelNames = (await models.ListAsync(team, ct)).ToDictionary(m => m.Id, m => m.Name);
        var setNames = (await sets.ListAsync(team, ct)).ToDictionary(s => s.Id, s => s.Name);
        var now = DateTime.UtcNow;

        var sb = new StringBuilder("<div class=\"page\"><h1>Audits</h1>\n");
        Filters(sb, verdict, state);
        if (rows.Count == 0)
            sb.Append("<p class=\"notice\" id=\"no-audits\">No audits").Append(verdict is null && state is null ? " yet" : " match these filters")
              .Append(". Submit one with <span class=\"mono\">POST /api/audits</span>.</p>\n");
        else
        {
            sb.Append("<table id=\"audits\"><thead><tr><th>Created</th><th>Audit</th><th>Model</th><th>Image set</th><th>State</th>")
              .Append("<th>Progress</th><th>Verdict</th></tr></thead><tbody>\n");
            foreach (var a in rows) Row(sb, AuditResponse.From(a, now), modelNames, setNames);
            sb.Append("</tbody></table>\n");
            if (rows.Count == Limit) sb.Append("<p class=\"muted\">Showing the newest ").Append(Limit).Append("; filter to see others.</p>\n");
        }
        sb.Append("</div>\n");
        // While something runs, the list refreshes itself; a finished list stays still.
        int? refresh = rows.Any(a => a.State is "queued" or "running" or "merging") ? 10 : null;
        return Html(Page(http, "Audits", sb.ToString(), refresh));
    }

    private static void Filters(StringBuilder sb, string? verdict, string? state)
    {
        sb.Append("<form class=\"filters\" method=\"get\" action=\"/ui/audits\"><label for=\"verdict\">Verdict</label><select id=\"verdict\" name=\"verdict\">");
        Option(sb, "", "any", verdict ?? "");
        foreach (var v in Verdicts) Option(sb, v, v, verdict ?? "");
        sb.Append("</select><label for=\"state\">State</label><select id=\"state\" name=\"state\">");
        Option(sb, "", "any", state ?? "");
        foreach (var s in States) Option(sb, s, s, state ?? "");
        sb.Append("</select><button type=\"submit\">Filter</button>");
        if (verdict is not null || state is not null) sb.Append("<a href=\"/ui/audits\">clear</a>");
        sb.Append("</form>\n");
    }

    private static void Option(StringBuilder sb, string value, string text, string selected) =>
        sb.Append("<option value=\"").Append(E(value)).Append('"').Append(value == selected ? " selected" : "").Append('>').Append(E(text)).Append("</option>");

    private static void Row(StringBuilder sb, AuditResponse a, Dictionary<Guid, string> models, Dictionary<Guid, string> sets)
    {
        var p = a.Progress;
        var share = p.ItemsTotal > 0 ? (double)p.ItemsDone / p.ItemsTotal : 0;
        sb.Append("<tr><td class=\"small\">").Append(Time(a.CreatedAt)).Append("</td>")
          .Append("<td><a class=\"mono\" href=\"/ui/audits/").Append(a.Id).Append("\">").Append(a.Id.ToString()[..13]).Append("…</a></td>")
          .Append("<td>").Append(E(models.GetValueOrDefault(a.ModelId, a.ModelId.ToString()))).Append("</td>")
          .Append("<td>").Append(E(sets.GetValueOrDefault(a.ImageSetId, a.ImageSetId.ToString()))).Append("</td>")
          .Append("<td><span class=\"tag\">").Append(E(a.State)).Append("</span></td>")
          .Append("<td class=\"small\"><span class=\"progress small\"><span style=\"width:").Append(Num(share * 100, "0.#")).Append("%\"></span></span> ")
          .Append(Int(p.ItemsDone)).Append(" / ").Append(Int(p.ItemsTotal)).Append("</td><td>");
        if (a.Verdict is null) sb.Append("<span class=\"muted\">—</span>");
        else sb.Append("<span class=\"pill ").Append(VerdictClass(a.Verdict)).Append("\">").Append(E(a.Verdict)).Append("</span>");
        sb.Append("</td></tr>\n");
    }
}
