using AuditSvc.Core.Gate;

namespace AuditSvc.Core.Audits;

public sealed record LeakageChange(string Attribute, double? Before, double? After, double Change, string VerdictBefore, string VerdictAfter);

public sealed record CueChange(string Attribute, string Value, int UnitsBefore, int UnitsAfter);

/// <summary>What changed between two audits, for a release note; the verdict applies the policy's rise limit.</summary>
public sealed record AuditComparison(
    string VerdictBefore,
    string VerdictAfter,
    IReadOnlyList<LeakageChange> Leakage,
    IReadOnlyList<CueChange> NewCues,
    IReadOnlyList<CueChange> VanishedCues,
    IReadOnlyList<string> NewFindings,
    IReadOnlyList<string> VanishedFindings,
    bool SameLayers,
    IReadOnlyList<VerdictReason> Reasons,
    string Verdict);

/// <summary>
/// Compares an earlier audit with a newer one. Cues (attribute values that units respond to) compare across any two
/// models; single findings (layer, unit, cue) only when both models read the same layers, since unit numbers mean
/// nothing across architectures. A policy with max_leakage_rise blocks on a rise rather than an absolute level.
/// </summary>
public static class AuditComparer
{
    public static AuditComparison Compare(AuditResult before, AuditResult after, AuditPolicy policy)
    {
        var names = before.Attributes.Select(a => a.Name).Union(after.Attributes.Select(a => a.Name), StringComparer.Ordinal);
        var changes = new List<LeakageChange>();
        var reasons = new List<VerdictReason>();
        foreach (var name in names)
        {
            var b = before.Attributes.FirstOrDefault(a => a.Name == name);
            var a = after.Attributes.FirstOrDefault(x => x.Name == name);
            double change = (a?.Leakage ?? 0) - (b?.Leakage ?? 0);
            changes.Add(new LeakageChange(name, b?.Leakage, a?.Leakage, Math.Round(change, 6), b?.Verdict ?? "absent", a?.Verdict ?? "absent"));
            if (a is not null && !policy.IsAllowed(name) && Verdicts.Rise(name, b?.Leakage, a.Leakage, policy) is { } rise) reasons.Add(rise);
        }
        var cb = before.CueGroups.ToDictionary(g => (g.Attribute, g.Value));
        var ca = after.CueGroups.ToDictionary(g => (g.Attribute, g.Value));
        var newCues = ca.Where(kv => !cb.ContainsKey(kv.Key)).Select(kv => new CueChange(kv.Key.Attribute, kv.Key.Value, 0, kv.Value.Units)).ToList();
        var vanished = cb.Where(kv => !ca.ContainsKey(kv.Key)).Select(kv => new CueChange(kv.Key.Attribute, kv.Key.Value, kv.Value.Units, 0)).ToList();
        bool sameLayers = before.Model.Layers.Select(l => l.Name).SequenceEqual(after.Model.Layers.Select(l => l.Name));
        static string Key(Finding f) => $"{f.Layer}#{f.Unit} {f.Attribute}={f.Value}";
        var fb = before.Findings.Select(Key).ToHashSet(StringComparer.Ordinal);
        var fa = after.Findings.Select(Key).ToHashSet(StringComparer.Ordinal);
        var newFindings = sameLayers ? fa.Except(fb).Order(StringComparer.Ordinal).ToList() : [];
        var vanishedFindings = sameLayers ? fb.Except(fa).Order(StringComparer.Ordinal).ToList() : [];
        string verdict = after.Verdict == Verdicts.Block || reasons.Count > 0 ? Verdicts.Block : Verdicts.Pass;
        return new AuditComparison(before.Verdict, after.Verdict, changes.OrderByDescending(c => c.Change).ToList(), newCues, vanished,
            newFindings, vanishedFindings, sameLayers, reasons, verdict);
    }
}
