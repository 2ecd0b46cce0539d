using System.Text;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Reporting;
using AuditSvc.Data.Audits;
using static AuditSvc.Api.Pages.PageHtml;

namespace AuditSvc.Api.Pages;

/// <summary>
/// The review control at the foot of a cue card: the decision in force on that cue (the latest signed one), and a
/// short form to record another. The history of every decision sits lower on the page.
/// </summary>
internal static class CueReview
{
    /// <summary>The decisions on a cue or a finding, in the one vocabulary the REST API and the pages share.</summary>
    public static readonly IReadOnlyList<(string Value, string Label, string Hint)> Decisions =
    [
        ("spurious", "Spurious", "the model must not use it"),
        ("acceptable", "Acceptable", "part of the object; give the reason"),
        ("needs-data", "Needs data", "collect counter-examples first"),
    ];

    public static string Label(string decision) =>
        Decisions.FirstOrDefault(d => d.Value == decision).Label ?? decision switch
        {
            "override" => "Verdict override",
            "spurious-cue" => "Spurious (earlier wording)",
            "needs-more-data" => "Needs data (earlier wording)",
            _ => decision,
        };

    public static string Footer(CueCard card, Guid auditId, string token, IReadOnlyList<ReviewRow> reviews, Guid? justRecorded, AuditResult result)
    {
        var sb = new StringBuilder(2048);
        // An attribute-wide card (no single value stands out) is decided value by value: the form offers them.
        var keys = card.Value is not null ? [card.Key]
            : result.ImageSet.Attributes.FirstOrDefault(a => a.Name == card.Attribute)?.Values.Select(v => $"{card.Attribute}={v.Value}").Take(50).ToList() ?? [];
        if (keys.Count == 0) return "";
        var mine = reviews.Where(r => r.Cue is not null && keys.Contains(r.Cue)).OrderBy(r => r.CreatedAt).ToList();
        var anchor = HtmlReport.CardAnchor(card.Key);
        if (justRecorded is { } id && mine.LastOrDefault()?.Id == id)
            sb.Append("<p class=\"confirm\" role=\"status\" id=\"confirm-").Append(E(anchor)).Append("\">✓ Recorded: <strong>")
              .Append(E(Label(mine[^1].Decision))).Append("</strong>, signed ").Append(E(mine[^1].Reviewer)).Append(", ").Append(Time(mine[^1].CreatedAt)).Append(".</p>");
        else if (mine.LastOrDefault() is { } last)
        {
            sb.Append("<p class=\"decided\">Decision in force: <strong>").Append(E(Label(last.Decision))).Append("</strong> — ").Append(E(last.Reviewer))
              .Append(", ").Append(Time(last.CreatedAt));
            if (last.Note.Length > 0) sb.Append(": ").Append(E(last.Note));
            if (mine.Count > 1) sb.Append(" <a href=\"#history\">(").Append(mine.Count - 1).Append(" earlier)</a>");
            sb.Append("</p>");
        }
        sb.Append("<form class=\"decide\" method=\"post\" action=\"/ui/audits/").Append(auditId).Append("/reviews\">").Append(token);
        if (keys.Count == 1)
            sb.Append("<input type=\"hidden\" name=\"cue\" value=\"").Append(E(card.Key)).Append("\">")
              .Append("<fieldset><legend>Your decision on <span class=\"cue\">").Append(E(card.Key)).Append("</span></legend>");
        else
        {
            sb.Append("<fieldset><legend>Your decision on <select name=\"cue\" aria-label=\"Which value of ").Append(E(card.Attribute)).Append("\">");
            foreach (var k in keys) sb.Append("<option value=\"").Append(E(k)).Append("\">").Append(E(k)).Append("</option>");
            sb.Append("</select></legend>");
        }
        foreach (var (value, label, hint) in Decisions)
        {
            var inputId = $"{anchor}-{value}";
            sb.Append("<label for=\"").Append(E(inputId)).Append("\"><input type=\"radio\" required name=\"decision\" id=\"").Append(E(inputId)).Append("\" value=\"")
              .Append(value).Append("\"> ").Append(label).Append(" <span class=\"muted\">(").Append(hint).Append(")</span></label>");
        }
        sb.Append("</fieldset><textarea name=\"reason\" maxlength=\"10000\" rows=\"2\" placeholder=\"Reason (required for acceptable)\" aria-label=\"Reason for the decision on ")
          .Append(E(card.Key)).Append("\"></textarea><button type=\"submit\">Sign and record</button></form>");
        return sb.ToString();
    }

    /// <summary>Every decision on the audit, newest first, with the later decision that superseded it.</summary>
    public static void History(StringBuilder sb, IReadOnlyList<ReviewHistoryEntry> history, Guid? justRecorded)
    {
        sb.Append("<section id=\"history\"><h2>Decisions so far (").Append(history.Count).Append(")</h2>\n");
        if (history.Count == 0)
        {
            sb.Append("<p class=\"muted\">No decision recorded yet. Each one is signed with the key you signed in with and kept for good: ")
              .Append("a changed mind is a new decision that supersedes the old one.</p></section>\n");
            return;
        }
        sb.Append("<table class=\"history\"><thead><tr><th>When</th><th>Who</th><th>On</th><th>Decision</th><th>Reason</th><th>Status</th></tr></thead><tbody>\n");
        foreach (var (r, later) in history.OrderByDescending(h => h.Review.CreatedAt).ThenByDescending(h => h.Review.Id))
        {
            sb.Append("<tr").Append(later is null ? "" : " class=\"superseded\"").Append(r.Id == justRecorded ? " id=\"just-recorded\"" : "")
              .Append("><td class=\"small\">").Append(Time(r.CreatedAt)).Append("</td><td>").Append(E(r.Reviewer))
              .Append(r.Signed ? "" : " <span class=\"muted small\">(unsigned, recorded before reviews were signed)</span>").Append("</td><td>")
              .Append(E(Subject(r))).Append("</td><td><strong>").Append(E(Label(r.Decision))).Append(r.Verdict is { } v ? " → " + E(v) : "")
              .Append("</strong></td><td>").Append(E(r.Note)).Append("</td><td class=\"small\">")
              .Append(later is null ? "in force" : $"superseded by {E(later.Reviewer)}, {Time(later.CreatedAt)}").Append("</td></tr>\n");
        }
        sb.Append("</tbody></table></section>\n");
    }

    /// <summary>The override in force, above the verdict: who set which verdict, when and why.</summary>
    public static void OverrideNotice(StringBuilder sb, ReviewRow o, string? engineVerdict, Guid? justRecorded)
    {
        sb.Append("<div class=\"page\"><p class=\"override\" id=\"override\"").Append(o.Id == justRecorded ? " role=\"status\"" : "").Append(">")
          .Append(o.Id == justRecorded ? "✓ Recorded. " : "").Append("<strong>Verdict overridden to ").Append(E(o.Verdict?.ToUpperInvariant()))
          .Append("</strong> by ").Append(E(o.Reviewer)).Append(", ").Append(Time(o.CreatedAt)).Append(": ").Append(E(o.Note))
          .Append(". The engine's verdict below is ").Append(E(engineVerdict?.ToUpperInvariant())).Append("; the release gate (<span class=\"mono\">auditsvc gate</span>) follows the override.</p></div>\n");
    }

    /// <summary>A signed override of the engine's verdict, with its required reason; tucked away, as it should be rare.</summary>
    public static void OverrideForm(StringBuilder sb, Guid auditId, string token, string? engineVerdict)
    {
        if (engineVerdict is not ("pass" or "block")) return;
        var other = engineVerdict == "pass" ? "block" : "pass";
        sb.Append("<details class=\"override-form\"><summary>Override the verdict</summary><p class=\"small muted\">The engine's verdict is ")
          .Append(engineVerdict).Append(". An override sets it to ").Append(other).Append(" for the release gate; it is signed with your key, ")
          .Append("shown on this page and in the gate's output, and kept in the history.</p><form class=\"decide\" method=\"post\" action=\"/ui/audits/")
          .Append(auditId).Append("/reviews\">").Append(token).Append("<input type=\"hidden\" name=\"decision\" value=\"override\">")
          .Append("<input type=\"hidden\" name=\"verdict\" value=\"").Append(other).Append("\">")
          .Append("<textarea name=\"reason\" required maxlength=\"10000\" rows=\"2\" placeholder=\"Reason (required)\" aria-label=\"Reason for overriding the verdict\"></textarea>")
          .Append("<button type=\"submit\">Sign and set the verdict to ").Append(other).Append("</button></form></details>\n");
    }

    private static string Subject(ReviewRow r) => r.Cue ?? (r.Finding is { } f ? $"finding {f}" : r.Verdict is not null ? "the verdict" : "the audit");
}
