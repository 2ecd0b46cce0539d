using AuditSvc.Core.Audits;
using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Gate;

/// <summary>One attribute's evidence before the gate: its behavioural measures and whether it can be separated from the label.</summary>
public sealed record AttributeEvidence(string Name, bool Confounded, IReadOnlyList<Measure> Measures);

/// <summary>
/// Leakage and verdict. The leakage score of an attribute is the largest of its gating behavioural measures, clamped
/// to 0..1. A measure blocks when its effect reaches the threshold, its test rejects "no effect" at the policy's gate
/// level after Benjamini–Hochberg adjustment across every gating measure of the audit (<see cref="Adjust"/>), and its
/// 95% interval lies above 0 (so the interval shown beside a block never contains 0). A small, noisy group cannot block
/// on its own; a large effect that clearly clears the threshold must. Allowed attributes never block; confounded ones do
/// what the policy says, and are always listed.
/// </summary>
public static class Verdicts
{
    public const string Pass = "pass";
    public const string Block = "block";

    public static double? Leakage(IReadOnlyList<Measure> measures)
    {
        var gating = measures.Where(m => m.Gating).ToList();
        return gating.Count == 0 ? null : Math.Clamp(gating.Max(m => double.IsFinite(m.Value) ? m.Value : 0), 0, 1);
    }

    /// <summary>
    /// Sets <see cref="Measure.QValue"/> on every gating measure with a p-value, adjusted (Benjamini–Hochberg) across
    /// all of them: one family per audit, so adding attributes cannot raise the chance of a false block. Measures
    /// without a test (no usable stratum) stay out of the family.
    /// </summary>
    public static List<List<Measure>> Adjust(IReadOnlyList<IReadOnlyList<Measure>> perAttribute)
    {
        ArgumentNullException.ThrowIfNull(perAttribute);
        var p = new List<double>();
        foreach (var list in perAttribute)
            foreach (var m in list)
                if (m.Gating && m.PValue is { } pv && double.IsFinite(pv)) p.Add(pv);
        var q = BenjaminiHochberg.Adjust(p.ToArray());
        int next = 0;
        var result = new List<List<Measure>>();
        foreach (var list in perAttribute)
            result.Add(list.Select(m => m.Gating && m.PValue is { } pv && double.IsFinite(pv) ? m with { QValue = q[next++] } : m).ToList());
        return result;
    }

    /// <summary>True when this measure alone would block at <paramref name="threshold"/> under the policy's gate level.</summary>
    public static bool Triggers(Measure m, double threshold, AuditPolicy policy) =>
        m.Gating && m.Value >= threshold && m.Low > 0 && m.QValue is { } q && q <= policy.GateLevel;

    public static (string Verdict, string AttributeVerdict, double? Leakage, List<VerdictReason> Reasons) Decide(AttributeEvidence e, AuditPolicy policy)
    {
        var reasons = new List<VerdictReason>();
        double? leakage = Leakage(e.Measures);
        double threshold = policy.ThresholdFor(e.Name);
        if (policy.IsAllowed(e.Name)) return (Pass, "allowed", leakage, reasons);
        var trigger = e.Measures.Where(m => Triggers(m, threshold, policy)).OrderByDescending(m => m.Value).FirstOrDefault();
        if (trigger is not null)
        {
            reasons.Add(new VerdictReason("leakage", e.Name, trigger.Name, trigger.Value, threshold,
                string.Create(System.Globalization.CultureInfo.InvariantCulture,
                    $"{trigger.Cue ?? e.Name}: {MeasureNames.Words(trigger.Name)} {trigger.Value:0.###} (95% interval {trigger.Low:0.###} to {trigger.High:0.###}, n = {trigger.N}, adjusted p {PText(trigger.QValue)}) reaches the threshold {threshold:0.###}")));
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

    /// <summary>A p-value in a sentence: below the smallest double it is "&lt; 1e-300", not 0.</summary>
    public static string PText(double? p) => p switch
    {
        null => "n/a",
        < 1e-300 => "< 1e-300",
        < 0.001 => p.Value.ToString("0.#E+0", System.Globalization.CultureInfo.InvariantCulture),
        _ => p.Value.ToString("0.###", System.Globalization.CultureInfo.InvariantCulture),
    };

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
