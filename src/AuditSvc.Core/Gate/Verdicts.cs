using AuditSvc.Core.Audits;

namespace AuditSvc.Core.Gate;

/// <summary>One attribute's evidence before the gate: its behavioural measures and whether it can be separated from the label.</summary>
public sealed record AttributeEvidence(string Name, bool Confounded, IReadOnlyList<Measure> Measures);

/// <summary>
/// Leakage and verdict. The leakage score of an attribute is the largest of its behavioural measures, clamped to
/// 0..1. A measure can block only when it is distinguishable from no effect (its interval's lower end above 0):
/// a small, noisy group must not block a release on its own, and a large one that clearly clears the threshold
/// must. Allowed attributes never block; confounded ones do what the policy says, and are always listed.
/// </summary>
public static class Verdicts
{
    public const string Pass = "pass";
    public const string Block = "block";

    public static double? Leakage(IReadOnlyList<Measure> measures) =>
        measures.Count == 0 ? null : Math.Clamp(measures.Max(m => double.IsFinite(m.Value) ? m.Value : 0), 0, 1);

    public static (string Verdict, string AttributeVerdict, double? Leakage, List<VerdictReason> Reasons) Decide(AttributeEvidence e, AuditPolicy policy)
    {
        var reasons = new List<VerdictReason>();
        double? leakage = Leakage(e.Measures);
        double threshold = policy.ThresholdFor(e.Name);
        if (policy.IsAllowed(e.Name)) return (Pass, "allowed", leakage, reasons);
        var trigger = e.Measures.Where(m => m.Value >= threshold && m.Low > 0).OrderByDescending(m => m.Value).FirstOrDefault();
        if (trigger is not null)
        {
            reasons.Add(new VerdictReason("leakage", e.Name, trigger.Name, trigger.Value, threshold,
                $"{e.Name}: {trigger.Name} {trigger.Value:0.###} (95% interval {trigger.Low:0.###} to {trigger.High:0.###}, n = {trigger.N}) reaches the threshold {threshold:0.###}"));
            return (Block, Block, leakage, reasons);
        }
        if (e.Confounded)
        {
            bool block = policy.Confounded == ConfoundedAction.Block;
            reasons.Add(new VerdictReason(block ? "confounded" : "warning", e.Name, "cramers_v", null, policy.ConfoundedV,
                $"{e.Name} nearly determines the label, so the audit cannot tell whether the model uses it or the object; collect counter-examples (images where {e.Name} and the label disagree) (policy: confounded = {(block ? "block" : "warn")})"));
            return (block ? Block : Pass, block ? Block : "warn", leakage, reasons);
        }
        return (Pass, Pass, leakage, reasons);
    }

    /// <summary>Blocks when an attribute's leakage rose by the policy's limit or more since an earlier audit.</summary>
    public static VerdictReason? Rise(string attribute, double? before, double? now, AuditPolicy policy)
    {
        if (policy.MaxLeakageRise is not { } limit || now is null) return null;
        double rise = now.Value - (before ?? 0);
        return rise >= limit
            ? new VerdictReason("rise", attribute, "leakage_rise", rise, limit, $"{attribute}: leakage rose by {rise:0.###} since the earlier audit (limit {limit:0.###})")
            : null;
    }
}
