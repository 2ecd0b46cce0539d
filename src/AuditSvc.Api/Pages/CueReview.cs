using System.Text;
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

    public static string Footer(CueCard card, Guid auditId, string token, IReadOnlyList<ReviewRow> reviews, Guid? justRecorded)
    {
        var sb = new StringBuilder(2048);
        var mine = reviews.Where(r => r.Cue == card.Key).OrderBy(r => r.CreatedAt).ToList();
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
        sb.Append("<form class=\"decide\" method=\"post\" action=\"/ui/audits/").Append(auditId).Append("/reviews\">").Append(token)
          .Append("<input type=\"hidden\" name=\"cue\" value=\"").Append(E(card.Key)).Append("\">")
          .Append("<fieldset><legend>Your decision on <span class=\"cue\">").Append(E(card.Key)).Append("</span></legend>");
        foreach (var (value, label, hint) in Decisions)
        {
            var inputId = $"{anchor}-{value}";
            sb.Append("<label for=\"").Append(E(inputId)).Append("\"><input type=\"radio\" required name=\"decision\" id=\"").Append(E(inputId)).Append("\" value=\"")
              .Append(value).Append("\"> ").Append(label).Append(" <span class=\"muted\">(").Append(hint).Append(")</span></label>");
        }
        sb.Append("</fieldset><textarea name=\"comment\" maxlength=\"10000\" rows=\"2\" placeholder=\"Reason (required for acceptable)\" aria-label=\"Reason for the decision on ")
          .Append(E(card.Key)).Append("\"></textarea><button type=\"submit\">Sign and record</button></form>");
        return sb.ToString();
    }

    /// <summary>Every decision on the audit, newest first, with what each superseded.</summary>
    public static void History(StringBuilder sb, IReadOnlyList<ReviewRow> reviews)
    {
        sb.Append("<section id=\"history\"><h2>Decisions so far (").Append(reviews.Count).Append(")</h2>\n");
        if (reviews.Count == 0)
        {
            sb.Append("<p class=\"muted\">No decision recorded yet. Each one is signed with the key you signed in with and kept for good.</p></section>\n");
            return;
        }
        sb.Append("<table class=\"history\"><thead><tr><th>When</th><th>Who</th><th>On</th><th>Decision</th><th>Reason</th><th>Status</th></tr></thead><tbody>\n");
        var ordered = reviews.OrderBy(r => r.CreatedAt).ThenBy(r => r.Id).ToList();
        for (int i = ordered.Count - 1; i >= 0; i--)
        {
            var r = ordered[i];
            var later = ordered.Skip(i + 1).FirstOrDefault(o => Subject(o) == Subject(r));
            sb.Append("<tr").Append(later is null ? "" : " class=\"superseded\"").Append("><td class=\"small\">").Append(Time(r.CreatedAt)).Append("</td><td>")
              .Append(E(r.Reviewer)).Append("</td><td>").Append(E(Subject(r))).Append("</td><td><strong>").Append(E(Label(r.Decision))).Append("</strong></td><td>")
              .Append(E(r.Note)).Append("</td><td class=\"small\">")
              .Append(later is null ? "in force" : $"superseded by {E(later.Reviewer)}, {Time(later.CreatedAt)}").Append("</td></tr>\n");
        }
        sb.Append("</tbody></table></section>\n");
    }

    private static string Subject(ReviewRow r) => r.Cue ?? (r.Finding is { } f ? $"finding {f}" : "the audit");
}
