using AuditSvc.Data.Audits;

namespace AuditSvc.Api.Audits;

/// <summary>Why a review request is refused: the field, the message, and 400 (malformed) or 422 (breaks a rule of the decision).</summary>
public sealed record ReviewProblem(string Field, string Message, int Status);

/// <summary>
/// The one review vocabulary, checked alike for the REST API and the browser form: on one finding or one cue,
/// `spurious`, `acceptable` (with a reason) or `needs-data`; on the audit's verdict, `override` with the verdict
/// wanted and a reason. Whether the finding, cue or verdict exists in the audit is the store's check.
/// </summary>
public static class ReviewRules
{
    public const int MaxReason = 10_000;
    public const int MaxCue = 400;

    public static ReviewProblem? Check(int? finding, string? cue, string? decision, string? verdict, string reason)
    {
        ArgumentNullException.ThrowIfNull(reason);
        if (string.IsNullOrEmpty(decision) || !ReviewDecisions.All.Contains(decision))
            return Bad("decision", $"must be one of {string.Join(", ", ReviewDecisions.All)}");
        if (reason.Length > MaxReason) return Bad("reason", $"longer than {MaxReason} characters");
        if (finding is < 0) return Bad("finding", "must be a finding's ordinal (0 or more)");
        if (cue is not null && (cue.Length > MaxCue || cue.IndexOf('=', StringComparison.Ordinal) <= 0))
            return Bad("cue", $"must be attribute=value (at most {MaxCue} characters)");
        if (verdict is not null and not ("pass" or "block")) return Bad("verdict", "must be pass or block");

        if (decision == ReviewDecisions.Override)
        {
            if (finding is not null) return Bad("finding", "an override concerns the audit's verdict: give no finding");
            if (cue is not null) return Bad("cue", "an override concerns the audit's verdict: give no cue");
            if (verdict is null) return Rule("verdict", "an override must name the verdict it sets (pass or block)");
        }
        else
        {
            if (verdict is not null) return Bad("verdict", $"only an override names a verdict, not {decision}");
            if (finding is not null && cue is not null) return Bad("cue", "give a finding or a cue, not both");
            if (finding is null && cue is null) return Bad("cue", $"{decision} concerns one cue (attribute=value) or one finding (ordinal): give one");
        }
        if (ReviewDecisions.NeedsReason(decision) && reason.Trim().Length == 0)
            return Rule("reason", decision == ReviewDecisions.Override
                ? "an override needs a reason"
                : "acceptable needs a reason: why the cue is part of the object");
        return null;
    }

    /// <summary>The store's refusal as the field it concerns; null for a stored review or an unknown audit.</summary>
    public static ReviewProblem? From(ReviewAdded added, NewReview review)
    {
        ArgumentNullException.ThrowIfNull(added);
        ArgumentNullException.ThrowIfNull(review);
        return added.Refusal switch
        {
            ReviewRefusal.UnknownFinding => Rule("finding", $"this audit has no finding {review.Finding}"),
            ReviewRefusal.UnknownCue => Rule("cue", $"this audit has no cue {review.Cue}: name an attribute value of its findings or attributes"),
            ReviewRefusal.VerdictUnchanged => Rule("verdict", $"the engine's verdict is already {added.EngineVerdict}: an override must change it"),
            ReviewRefusal.AuditNotDone => new ReviewProblem("verdict", $"the audit is {added.State}: there is no verdict to override yet", 409),
            ReviewRefusal.KeyNotOfTeam => new ReviewProblem("Authorization", "the signing key is not a live key of this team", 403),
            _ => null,
        };
    }

    private static ReviewProblem Bad(string field, string message) => new(field, message, 400);

    private static ReviewProblem Rule(string field, string message) => new(field, message, 422);
}
