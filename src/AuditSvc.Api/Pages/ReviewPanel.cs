using System.Globalization;
using System.Text;
using AuditSvc.Api.Audits;
using AuditSvc.Api.Auth;
using AuditSvc.Core.Reporting;
using AuditSvc.Data.Audits;
using Microsoft.AspNetCore.Http;
using static AuditSvc.Api.Pages.PageHtml;

namespace AuditSvc.Api.Pages;

/// <summary>
/// The review panel under a finished audit's report: one small form per cue group (attribute=value) and per finding
/// the report shows, and the reviews already recorded on each, with who and when. Stored in the reviews table,
/// so the REST API lists them too.
/// </summary>
internal static class ReviewPanel
{
    private const int MaxComment = 10_000;

    // The one review vocabulary (ReviewDecisions), as the pages word it; an override is made on the verdict, not here.
    private static readonly Dictionary<string, string> Labels = new(StringComparer.Ordinal)
    {
        [ReviewDecisions.Spurious] = "spurious (must not be used)",
        [ReviewDecisions.Acceptable] = "acceptable (part of the object; give the reason)",
        [ReviewDecisions.NeedsData] = "needs data",
    };

    /// <summary>A cue group: the findings' distinct attribute=value, in the order the findings first name them.</summary>
    public sealed record CueGroup(int Index, string Key, string Attribute, string Value, int Units);

    public static IReadOnlyList<CueGroup> CueGroups(IReadOnlyList<StoredFinding> findings) =>
        findings.GroupBy(f => (f.Attribute, f.Value)).Select((g, i) => new CueGroup(i, Key(g.Key.Attribute, g.Key.Value), g.Key.Attribute, g.Key.Value, g.Count())).ToList();

    public static void Render(StringBuilder sb, HttpContext http, Guid auditId, IReadOnlyList<StoredFinding> findings, IReadOnlyList<ReviewRow> reviews)
    {
        sb.Append("<section class=\"review-panel\" id=\"review\"><h2>Review</h2>\n")
          .Append("<p class=\"muted\">Decide for each cue and each finding whether the cue is spurious (the model must not use it), acceptable ")
          .Append("(a legitimate part of the object), or needs more data (collect counter-examples first). Reviews are signed with your key's name and prefix.</p>\n");
        var token = PageForms.TokenField(http);
        var groups = CueGroups(findings);
        sb.Append("<h3>Cues (").Append(groups.Count).Append(")</h3>\n");
        if (groups.Count == 0) sb.Append("<p class=\"muted\">No unit concentrates on a cue: nothing to review here.</p>\n");
        foreach (var g in groups)
        {
            sb.Append("<div class=\"review-item\" id=\"rv-cue-").Append(g.Index).Append("\"><h3><span class=\"cue\">").Append(E(g.Attribute)).Append('=')
              .Append(E(g.Value)).Append("</span> <span class=\"muted small\">").Append(g.Units).Append(g.Units == 1 ? " unit" : " units").Append("</span></h3>\n");
            Reviews(sb, reviews.Where(r => r.Cue == g.Key));
            Form(sb, auditId, token, "cue", g.Key, $"the cue {g.Key}");
            sb.Append("</div>\n");
        }

        var shown = findings.Take(HtmlReport.MaxFindings).ToList();
        sb.Append("<h3>Findings (").Append(findings.Count).Append(findings.Count > shown.Count ? $", the first {shown.Count} shown" : "").Append(")</h3>\n");
        foreach (var f in shown)
        {
            sb.Append("<div class=\"review-item\" id=\"rv-f-").Append(f.Ordinal).Append("\"><h3><span class=\"mono\">").Append(E(f.Layer)).Append(" / unit ")
              .Append(f.Unit).Append("</span> <span class=\"cue\">").Append(E(f.Attribute)).Append('=').Append(E(f.Value)).Append("</span> <a class=\"small\" href=\"#")
              .Append(E(HtmlReport.FindingAnchor(f.Layer, f.Unit))).Append("\">exemplars in the report ↑</a></h3>")
              .Append("<div class=\"stats\"><span class=\"stat\"><span class=\"k\">q</span><span class=\"v\">").Append(Q(f.QValue))
              .Append("</span></span><span class=\"stat\"><span class=\"k\">odds ratio</span><span class=\"v\">").Append(f.OddsRatio is { } or ? Num(or, "0.0") : "—")
              .Append("</span></span><span class=\"stat\"><span class=\"k\">region</span><span class=\"v\">").Append(E(f.Region ?? "—")).Append("</span></span></div>\n");
            Reviews(sb, reviews.Where(r => r.Finding == f.Ordinal && r.Cue is null));
            Form(sb, auditId, token, "finding", f.Ordinal.ToString(CultureInfo.InvariantCulture), $"finding {f.Layer} unit {f.Unit}");
            sb.Append("</div>\n");
        }

        // Reviews on the audit as a whole (from the REST API) or on findings past the ones drawn.
        var shownOrdinals = shown.Select(f => f.Ordinal).ToHashSet();
        var other = reviews.Where(r => r.Cue is null && (r.Finding is not { } o || !shownOrdinals.Contains(o))).ToList();
        if (other.Count > 0)
        {
            sb.Append("<h3>Other reviews</h3><div class=\"review-item\" id=\"rv-other\">");
            Reviews(sb, other);
            sb.Append("</div>\n");
        }
        sb.Append("</section>\n");
    }

    /// <summary>
    /// The form's review, signed by the session's key: a decision on one cue (<c>cue</c>) or one finding (<c>finding</c>),
    /// or an override (<c>decision=override</c>, <c>verdict</c>); the reason comes as <c>reason</c> or <c>comment</c>.
    /// Checked by the same rules as the REST API; a refusal says which field and why.
    /// </summary>
    public static async Task<IResult> PostAsync(Guid id, HttpContext http, ReviewStore store, CancellationToken ct)
    {
        var form = await PageForms.ReadValidAsync(http);
        if (form is null) return PageForms.Refused(http);
        var team = http.User.TeamId();
        var back = $"/ui/audits/{id}";
        if (await store.FindingsAsync(team, id, ct) is not { } findings)
            return Message(http, 404, "Audit not found", $"No audit {id} for this team.", "/ui/audits");

        var cue = Field(form["cue"]);
        var findingText = Field(form["finding"]);
        int? finding = null;
        if (findingText is not null)
        {
            if (!int.TryParse(findingText, NumberStyles.None, CultureInfo.InvariantCulture, out var ordinal))
                return Message(http, 400, "Review not recorded", "finding must be a finding's ordinal.", back);
            finding = ordinal;
        }
        var reason = (Field(form["reason"]) ?? Field(form["comment"]) ?? "").Trim();
        var decision = form["decision"].ToString();
        var verdict = Field(form["verdict"]);
        if (ReviewRules.Check(finding, cue, decision, verdict, reason) is { } bad)
            return Message(http, bad.Status, "Review not recorded", $"{bad.Field}: {bad.Message}.", back);

        var review = new NewReview(http.User.KeyId(), finding, cue, verdict, decision, reason);
        var added = await store.AddAsync(team, id, review, ct);
        if (added.Refusal == ReviewRefusal.AuditNotFound)
            return Message(http, 404, "Audit not found", $"No audit {id} for this team.", "/ui/audits");
        if (ReviewRules.From(added, review) is { } refused)
            return Message(http, refused.Status, "Review not recorded", $"{refused.Field}: {refused.Message}.", back);
        // Back to the audit page, which confirms the review it names on the cue's card (or in the history).
        var anchor = cue is not null ? HtmlReport.CardAnchor(cue) : "history";
        return SeeOther($"{back}?recorded={added.Review!.Id}#{anchor}");
    }

    private static string? Field(Microsoft.Extensions.Primitives.StringValues v) => v.ToString() is { Length: > 0 } s ? s : null;

    private static string Key(string attribute, string value) => $"{attribute}={value}";

    private static void Reviews(StringBuilder sb, IEnumerable<ReviewRow> rows)
    {
        var list = rows.ToList();
        if (list.Count == 0)
        {
            sb.Append("<p class=\"muted small\">No reviews yet.</p>\n");
            return;
        }
        sb.Append("<ul class=\"reviews\">");
        foreach (var r in list)
        {
            sb.Append("<li><span class=\"decision\">").Append(E(Labels.GetValueOrDefault(r.Decision, r.Decision))).Append("</span> by <strong>")
              .Append(E(r.Reviewer)).Append("</strong>, ").Append(Time(r.CreatedAt));
            if (r.Note.Length > 0) sb.Append(": ").Append(E(r.Note));
            sb.Append("</li>");
        }
        sb.Append("</ul>\n");
    }

    private static void Form(StringBuilder sb, Guid auditId, string token, string field, string value, string what)
    {
        sb.Append("<form class=\"review\" method=\"post\" action=\"/ui/audits/").Append(auditId).Append("/reviews\">").Append(token)
          .Append("<input type=\"hidden\" name=\"").Append(field).Append("\" value=\"").Append(E(value)).Append("\">")
          .Append("<select name=\"decision\" required aria-label=\"Decision on ").Append(E(what)).Append("\"><option value=\"\" selected disabled>decision…</option>");
        foreach (var (v, label) in Labels) sb.Append("<option value=\"").Append(v).Append("\">").Append(label).Append("</option>");
        sb.Append("</select><textarea name=\"comment\" maxlength=\"").Append(MaxComment).Append("\" placeholder=\"Comment (optional)\" aria-label=\"Comment on ")
          .Append(E(what)).Append("\"></textarea><button type=\"submit\">Record review</button></form>\n");
    }

    private static string Q(double? q) => q switch
    {
        null => "—",
        0 => "0",
        >= 0.001 => q.Value.ToString("0.000", CultureInfo.InvariantCulture),
        _ => q.Value.ToString("0.0e+0", CultureInfo.InvariantCulture),
    };
}
