using AuditSvc.Data.Audits;

namespace AuditSvc.Api.Audits;

/// <summary>
/// A review: of one finding (its ordinal), of one cue (`attribute=value`), or an override of the audit's verdict
/// (decision `override`, with `verdict` and a reason). The reviewer is the key that signs the request; a `reviewer`
/// field in the body is not read. `note` is accepted as an older spelling of `reason`.
/// </summary>
public sealed record AddReview(int? Finding, string? Cue, string? Decision, string? Reason, string? Verdict = null, string? Note = null);

/// <summary>The API key that signed a review: its id, name and prefix (what `keys list` shows).</summary>
public sealed record SignerResponse(Guid KeyId, string Name, string Prefix)
{
    public static SignerResponse? From(ReviewSigner? s) => s is null ? null : new SignerResponse(s.KeyId, s.Name, s.Prefix);
}

/// <summary>The later review of the same subject that replaced one: who, what and when.</summary>
public sealed record SupersedingReview(Guid Id, string Reviewer, SignerResponse? Signer, string Decision, string? Verdict, DateTime CreatedAt);

/// <summary>
/// One entry of an audit's review history. `signer` is the key that signed it; rows recorded before reviews were
/// signed have `legacy: true`, no signer and the free-text name they were sent with in `reviewer`.
/// </summary>
public sealed record ReviewResponse(Guid Id, Guid AuditId, string Subject, int? Finding, string? Cue, string? Verdict,
    string Decision, string Reason, string Reviewer, SignerResponse? Signer, bool Legacy, DateTime CreatedAt,
    Guid? Supersedes, SupersedingReview? SupersededBy)
{
    public static ReviewResponse From(ReviewRow r, ReviewRow? by) => new(r.Id, r.AuditId, r.Subject, r.Finding, r.Cue, r.Verdict,
        r.Decision, r.Note, r.Reviewer, SignerResponse.From(r.Signer), !r.Signed, r.CreatedAt, r.Supersedes,
        by is null ? null : new SupersedingReview(by.Id, by.Reviewer, SignerResponse.From(by.Signer), by.Decision, by.Verdict, by.CreatedAt));

    public static ReviewResponse From(ReviewHistoryEntry e) => From(e.Review, e.SupersededBy);
}
