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

/// <summary>
/// <c>/ui/audits?verdict=&amp;state=&amp;model=&amp;set=&amp;q=</c>: the team's audits, newest first, by the names their
/// users gave, with progress and time left while they run (the list reloads itself then).
/// </summary>
internal static class AuditListPage
{
    private static readonly string[] Verdicts = ["pass", "block"];
    private static readonly string[] States = ["queued", "running", "merging", "done", "failed", "cancelled"];
    private const int Limit = 200;
    private const int MaxSearch = 200;

    public static RouteGroupBuilder MapAuditList(this RouteGroupBuilder ui)
    {
        ui.MapGet("/audits", ShowAsync);
        return ui;
    }

    private static async Task<IResult> ShowAsync(HttpContext http, AuditStore audits, ModelStore models, ImageSetStore sets, ReviewStore reviews,
        string? verdict, string? state, string? model, string? set, string? q, CancellationToken ct)
    {
        verdict = string.IsNullOrEmpty(verdict) ? null : verdict;
        state = string.IsNullOrEmpty(state) ? null : state;
        q = string.IsNullOrWhiteSpace(q) ? null : q.Trim();
        if (verdict is not null && !Verdicts.Contains(verdict))
            return Message(http, 400, "Audits", "verdict must be pass or block.", "/ui/audits");
        if (state is not null && !States.Contains(state))
            return Message(http, 400, "Audits", $"state must be one of {string.Join(", ", States)}.", "/ui/audits");
        if (q is { Length: > MaxSearch }) return Message(http, 400, "Audits", $"the search is longer than {MaxSearch} characters.", "/ui/audits");
        Guid? modelId = null, setId = null;
        if (!string.IsNullOrEmpty(model))
        {
            if (!Guid.TryParse(model, out var m)) return Message(http, 400, "Audits", "model must be one of the listed models.", "/ui/audits");
            modelId = m;
        }
        if (!string.IsNullOrEmpty(set))
        {
            if (!Guid.TryParse(set, out var s)) return Message(http, 400, "Audits", "set must be one of the listed image sets.", "/ui/audits");
            setId = s;
        }

        var team = http.User.TeamId();
        var rows = await audits.ListAsync(team, new AuditFilter(modelId, setId, verdict, state, Limit, q), ct);
        var modelNames = (await models.NamesAsync(team, ct)).ToDictionary();
        var setNames = (await sets.NamesAsync(team, ct)).ToDictionary();
        var overridden = await reviews.OverriddenVerdictsAsync(team, rows.Where(a => a.Verdict is not null).Select(a => a.Id).ToList(), ct);
        var now = DateTime.UtcNow;
        bool filtered = verdict is not null || state is not null || modelId is not null || setId is not null || q is not null;

        var sb = new StringBuilder("<div class=\"page\"><h1>Audits</h1>\n");
        Filters(sb, verdict, state, modelId, setId, q, modelNames, setNames, filtered);
        if (rows.Count == 0)
            sb.Append("<p class=\"notice\" id=\"no-audits\">No audits").Append(filtered ? " match these filters" : " yet")
              .Append(". Submit one with <span class=\"mono\">POST /api/audits</span>.</p>\n");
        else
        {
            sb.Append("<table id=\"audits\"><thead><tr><th>Model</th><th>Image set</th><th>Verdict</th><th>State</th>")
              .Append("<th>Progress</th><th>Created</th></tr></thead><tbody>\n");
            foreach (var a in rows) Row(sb, AuditResponse.From(a, now), modelNames, setNames, overridden.GetValueOrDefault(a.Id));
            sb.Append("</tbody></table>\n");
            if (rows.Count == Limit) sb.Append("<p class=\"muted\">Showing the newest ").Append(Limit).Append("; filter or search to see others.</p>\n");
        }
        sb.Append("</div>\n");
        // While something runs, the list refreshes itself; a finished list stays still.
        int? refresh = rows.Any(a => a.State is "queued" or "running" or "merging") ? 10 : null;
        return Html(Page(http, "Audits", sb.ToString(), refresh));
    }

    private static void Filters(StringBuilder sb, string? verdict, string? state, Guid? model, Guid? set, string? q,
        Dictionary<Guid, string> models, Dictionary<Guid, string> sets, bool filtered)
    {
        sb.Append("<form class=\"filters\" method=\"get\" action=\"/ui/audits\" role=\"search\">")
          .Append("<label for=\"q\">Search</label><input type=\"text\" id=\"q\" name=\"q\" maxlength=\"").Append(MaxSearch)
          .Append("\" placeholder=\"model or set name, audit id\" value=\"").Append(E(q ?? "")).Append("\">")
          .Append("<label for=\"verdict\">Verdict</label><select id=\"verdict\" name=\"verdict\">");
        Option(sb, "", "any", verdict ?? "");
        foreach (var v in Verdicts) Option(sb, v, v, verdict ?? "");
        sb.Append("</select><label for=\"state\">State</label><select id=\"state\" name=\"state\">");
        Option(sb, "", "any", state ?? "");
        foreach (var s in States) Option(sb, s, s, state ?? "");
        sb.Append("</select><label for=\"model\">Model</label><select id=\"model\" name=\"model\">");
        Option(sb, "", "any", model?.ToString() ?? "");
        foreach (var (id, name) in models.OrderBy(m => m.Value, StringComparer.OrdinalIgnoreCase)) Option(sb, id.ToString(), name, model?.ToString() ?? "");
        sb.Append("</select><label for=\"set\">Image set</label><select id=\"set\" name=\"set\">");
        Option(sb, "", "any", set?.ToString() ?? "");
        foreach (var (id, name) in sets.OrderBy(s => s.Value, StringComparer.OrdinalIgnoreCase)) Option(sb, id.ToString(), name, set?.ToString() ?? "");
        sb.Append("</select><button type=\"submit\">Show</button>");
        if (filtered) sb.Append("<a href=\"/ui/audits\">clear</a>");
        sb.Append("</form>\n");
    }

    private static void Option(StringBuilder sb, string value, string text, string selected) =>
        sb.Append("<option value=\"").Append(E(value)).Append('"').Append(value == selected ? " selected" : "").Append('>').Append(E(text)).Append("</option>");

    private static void Row(StringBuilder sb, AuditResponse a, Dictionary<Guid, string> models, Dictionary<Guid, string> sets, string? overriddenTo)
    {
        var p = a.Progress;
        var share = p.ItemsTotal > 0 ? (double)p.ItemsDone / p.ItemsTotal : 0;
        var modelName = models.GetValueOrDefault(a.ModelId, "model " + a.ModelId.ToString()[..8]);
        sb.Append("<tr><td><a href=\"/ui/audits/").Append(a.Id).Append("\">").Append(E(modelName)).Append("</a></td>")
          .Append("<td>").Append(E(sets.GetValueOrDefault(a.ImageSetId, "set " + a.ImageSetId.ToString()[..8]))).Append("</td><td>");
        if (a.Verdict is null) sb.Append("<span class=\"muted\">—</span>");
        else if (overriddenTo is not null && overriddenTo != a.Verdict)
            // The verdict that stands is the override's; the engine's stays visible beside it.
            sb.Append("<span class=\"pill ").Append(VerdictClass(overriddenTo)).Append("\">").Append(overriddenTo == "block" ? "✕ " : "✓ ").Append(E(overriddenTo))
              .Append("</span> <span class=\"small muted\">overridden; engine: ").Append(E(a.Verdict)).Append("</span>");
        else sb.Append("<span class=\"pill ").Append(VerdictClass(a.Verdict)).Append("\">").Append(a.Verdict == "block" ? "✕ " : "✓ ").Append(E(a.Verdict)).Append("</span>");
        sb.Append("</td><td>").Append(E(a.State)).Append("</td>")
          .Append("<td class=\"small\"><span class=\"progress small\"><span style=\"width:").Append(Num(share * 100, "0.#")).Append("%\"></span></span> ")
          .Append(Int(p.ItemsDone)).Append(" / ").Append(Int(p.ItemsTotal));
        if (a.State is "queued" or "running" or "merging")
            sb.Append(p.EtaSeconds is { } eta ? " · about " + Duration(eta) + " left" : a.State == "merging" ? " · analysing" : "");
        sb.Append("</td><td class=\"small\">").Append(Time(a.CreatedAt)).Append("</td></tr>\n");
    }
}
