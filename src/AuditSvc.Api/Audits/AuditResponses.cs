using System.Text.Json;
using AuditSvc.Api.Hosting;
using AuditSvc.Data.Audits;

namespace AuditSvc.Api.Audits;

/// <summary>Submit an audit of a model on an image set; policy and chunk size are optional.</summary>
public sealed record SubmitAudit(Guid? ModelId, Guid? ImageSetId, JsonElement? Policy, int? ChunkSize);

/// <summary>Images done of total, the rate since the audit started, and the time left at that rate.</summary>
public sealed record AuditProgress(int ItemsDone, int ItemsTotal, int ChunksDone, int ChunksTotal, double? ItemsPerSecond, double? EtaSeconds);

/// <summary>
/// An audit's state. <see cref="Verdict"/> is the verdict that stands (a signed override's when there is one, as on the
/// verdict endpoint and the pages); <see cref="EngineVerdict"/> is the engine's own, always shown beside it.
/// </summary>
public sealed record AuditResponse(Guid Id, Guid ModelId, Guid ImageSetId, string State, string? Verdict, string? EngineVerdict,
    bool Overridden, string? Error, AuditProgress Progress, JsonElement Policy, DateTime CreatedAt, DateTime? StartedAt, DateTime? FinishedAt)
{
    public static AuditResponse From(AuditRow a, DateTime now, string? overriddenTo = null)
    {
        double? rate = null, eta = null;
        if (a.StartedAt is { } started && a.ItemsDone > 0)
        {
            var seconds = ((a.FinishedAt ?? now) - started).TotalSeconds;
            if (seconds > 0) rate = a.ItemsDone / seconds;
            if (rate > 0 && a.State is "running") eta = (a.ItemsTotal - a.ItemsDone) / rate;
        }
        var overridden = a.Verdict is not null && overriddenTo is not null;
        return new AuditResponse(a.Id, a.ModelId, a.ImageSetId, a.State, overridden ? overriddenTo : a.Verdict, a.Verdict, overridden, a.Error,
            new AuditProgress(a.ItemsDone, a.ItemsTotal, a.ChunksDone, a.ChunksTotal, rate, eta),
            JsonText.Element(a.Policy), a.CreatedAt, a.StartedAt, a.FinishedAt);
    }
}

public sealed record AttributeVerdict(string Attribute, double Leakage, string Verdict);

/// <summary>A signed override of the engine's verdict: the verdict it sets, why, by which key and when.</summary>
public sealed record VerdictOverride(Guid ReviewId, string Verdict, string Reason, string Reviewer, SignerResponse? Signer, DateTime CreatedAt)
{
    public static VerdictOverride? From(ReviewRow? r) => r?.Verdict is not { } v ? null
        : new VerdictOverride(r.Id, v, r.Note, r.Reviewer, SignerResponse.From(r.Signer), r.CreatedAt);
}

/// <summary>
/// The release question: the verdict that stands (<see cref="Verdict"/>: the latest override's when one was signed,
/// else the engine's), the engine's own verdict, the override if any, and the attributes behind the engine's verdict.
/// </summary>
public sealed record VerdictResponse(Guid AuditId, string Verdict, string EngineVerdict, VerdictOverride? Override,
    IReadOnlyList<AttributeVerdict> Attributes)
{
    public bool Overridden => Override is not null;
}
