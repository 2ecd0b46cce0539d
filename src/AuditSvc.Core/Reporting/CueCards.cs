using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;

namespace AuditSvc.Core.Reporting;

/// <summary>
/// One cue as a reviewer decides it: an attribute value (a column's or an inferred place cue's), what the model's
/// decisions did when it was moved, where it sits, and the units that notice it most.
/// </summary>
/// <param name="Value">Null for an attribute-wide card (an attribute that blocks on its accuracy gap with no value the units or interventions single out).</param>
/// <param name="Key">What a review names: <c>attribute=value</c>, or the attribute alone for an attribute-wide card.</param>
/// <param name="Measures">This value's interventions, then the attribute's accuracy gap (shared by its values).</param>
/// <param name="Units">The strongest units that notice the value (highest AUROC first), at most <see cref="CueCards.UnitsShown"/>.</param>
/// <param name="UnitCount">All units that notice the value.</param>
/// <param name="Follows">True when the decisions follow the cue: a measure on this card blocks the release.</param>
/// <param name="Triggering">The measures on this card that block, largest first.</param>
public sealed record CueCard(
    string Attribute,
    string? Value,
    string Key,
    string? PushesToward,
    AttributeReport Report,
    IReadOnlyList<Measure> Measures,
    CueReport? Cue,
    IReadOnlyList<Finding> Units,
    int UnitCount,
    double? Leakage,
    bool Follows,
    IReadOnlyList<Measure> Triggering)
{
    public double Threshold => Report.Threshold;

    public bool Allowed => Report.Allowed;

    public bool Inferred => Report.Inferred;
}

/// <summary>Builds the cue cards of an audit: the cues the decisions follow first (largest leakage first), then the rest.</summary>
public static class CueCards
{
    /// <summary>Units drawn per card (their exemplar grids).</summary>
    public const int UnitsShown = 6;

    public static IReadOnlyList<CueCard> Of(AuditResult r)
    {
        ArgumentNullException.ThrowIfNull(r);
        var cards = new List<CueCard>();
        foreach (var a in r.Attributes)
        {
            var gap = a.Measures.Where(m => m.Cue is null).ToList();
            var values = new List<string>();
            void Add(string v)
            {
                if (!values.Contains(v, StringComparer.Ordinal)) values.Add(v);
            }
            foreach (var c in a.Cues) Add(c.Value);
            foreach (var m in a.Measures)
                if (CueValue(a.Name, m.Cue) is { } v) Add(v);
            foreach (var g in r.CueGroups.Where(g => g.Attribute == a.Name)) Add(g.Value);

            var perValue = values.Select(v => (Value: v, Own: a.Measures.Where(m => CueValue(a.Name, m.Cue) == v).ToList())).ToList();
            bool anyOwnTriggers = perValue.Any(p => p.Own.Any(m => Triggers(m, a, r.Policy)));
            foreach (var (v, own) in perValue)
            {
                var measures = own.Concat(gap).ToList();
                // The gap is the attribute's: it carries a value's card only when no value's own intervention blocks.
                var triggering = own.Concat(anyOwnTriggers ? [] : gap).Where(m => Triggers(m, a, r.Policy)).OrderByDescending(m => m.Value).ToList();
                var cue = a.Cues.FirstOrDefault(c => c.Value == v);
                var units = r.Findings.Where(f => f.Attribute == a.Name && f.Value == v)
                    .OrderByDescending(f => f.Auroc).ThenBy(f => f.QValue).ToList();
                var group = r.CueGroups.FirstOrDefault(g => g.Attribute == a.Name && g.Value == v);
                cards.Add(new CueCard(a.Name, v, $"{a.Name}={v}", cue?.PushesToward ?? Toward(own), a, measures, cue,
                    units.Take(UnitsShown).ToList(), Math.Max(group?.Units ?? 0, units.Count), Verdicts.Leakage(measures),
                    a.Verdict == Verdicts.Block && triggering.Count > 0, triggering));
            }
            if (values.Count == 0 && (a.Verdict == Verdicts.Block || gap.Count > 0))
            {
                var triggering = gap.Where(m => Triggers(m, a, r.Policy)).OrderByDescending(m => m.Value).ToList();
                cards.Add(new CueCard(a.Name, null, a.Name, null, a, gap, null, [], 0, Verdicts.Leakage(gap),
                    a.Verdict == Verdicts.Block, triggering));
            }
        }
        return cards.OrderByDescending(c => c.Follows).ThenByDescending(c => c.Follows ? c.Leakage ?? 0 : 0)
            .ThenByDescending(c => c.UnitCount).ToList();
    }

    /// <summary>The value a measure's cue names (<c>stamp=yes → mouldy</c> gives <c>yes</c>), or null for the attribute-wide gap.</summary>
    public static string? CueValue(string attribute, string? cue)
    {
        if (cue is null || !cue.StartsWith(attribute + "=", StringComparison.Ordinal)) return null;
        var rest = cue[(attribute.Length + 1)..];
        int arrow = rest.LastIndexOf(" → ", StringComparison.Ordinal);
        return arrow >= 0 ? rest[..arrow] : rest;
    }

    /// <summary>The class a measure's cue pushes toward (<c>… → mouldy</c>), or null.</summary>
    public static string? Target(string? cue)
    {
        if (cue is null) return null;
        int arrow = cue.LastIndexOf(" → ", StringComparison.Ordinal);
        return arrow >= 0 ? cue[(arrow + 3)..] : null;
    }

    private static string? Toward(IEnumerable<Measure> measures) => measures.Select(m => Target(m.Cue)).FirstOrDefault(t => t is not null);

    private static bool Triggers(Measure m, AttributeReport a, AuditPolicy policy) => !a.Allowed && Verdicts.Triggers(m, a.Threshold, policy);
}
