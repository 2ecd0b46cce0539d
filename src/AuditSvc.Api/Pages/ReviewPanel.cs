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
/// <c>POST /ui/audits/{id}/reviews</c>: the decision forms of the audit page (on a cue card, or the verdict override),
/// under the same rules as the REST API and signed with the session's key; back to the page, which confirms it.
/// </summary>
internal static class ReviewPanel
{
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
}
