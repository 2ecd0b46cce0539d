using AuditSvc.Core.Activations;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;
using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Analysis;

/// <summary>A finding before it is written out: the unit, the cue, the test and the exemplars' make-up.</summary>
public sealed record FindingCore(
    int Unit,
    LayerSlice Layer,
    int Channel,
    int Attribute,
    int Value,
    AssociationTest Test,
    double QValue,
    Peak[] Top,
    int WithValue,
    int Known,
    double BaseRate,
    double OddsRatio,
    double TailP,
    string Region,
    int[] Grid);

/// <summary>Everything the pure analysis derives from one activation pass.</summary>
public sealed record AnalysisResult(
    AttributeLink[] Links,
    ScanResult Scan,
    IReadOnlyList<FindingCore> Findings,
    IReadOnlyList<GroupAccuracy> Groups,
    IReadOnlyDictionary<int, Measure> Gaps);

/// <summary>The statistics of DESIGN.md over an activation pass: association scan, findings, group accuracy.</summary>
public static class AuditAnalysis
{
    /// <summary>How many exemplars a finding shows (Zeiler &amp; Fergus show nine per unit).</summary>
    public const int ShownExemplars = 9;

    public static AnalysisResult Analyze(ItemTable table, ModelPlan plan, ActivationResult act, AuditPolicy policy, CancellationToken ct)
    {
        var links = AttributeAssociation.Compute(table, act.Scored, policy);
        var scan = AssociationScan.Run(table, act, policy, ct);
        var findings = new List<FindingCore>();
        for (int t = 0; t < scan.Tests.Length; t++)
        {
            var test = scan.Tests[t];
            if (scan.QValues[t] > policy.FdrLevel || !(test.Auroc >= policy.MinAuroc)) continue;
            findings.Add(Describe(table, plan, act, test, scan.QValues[t]));
        }
        findings = Interleave(findings);
        var groups = new List<GroupAccuracy>();
        var gaps = new Dictionary<int, Measure>();
        foreach (var link in links)
        {
            var (g, gap) = GroupAccuracyAnalysis.Compute(table, act, link, policy);
            groups.AddRange(g);
            if (gap is not null) gaps[link.Attribute] = gap;
        }
        return new AnalysisResult(links, scan, findings, groups, gaps);
    }

    /// <summary>
    /// The analysis over a table that <see cref="PlaceCues.Infer"/> extended with place cues: their link to the label,
    /// group accuracies and gap are added; the columns' results stay as they were.
    /// </summary>
    public static AnalysisResult WithInferred(ItemTable extended, ActivationResult act, AnalysisResult analysis, AuditPolicy policy)
    {
        ArgumentNullException.ThrowIfNull(extended);
        ArgumentNullException.ThrowIfNull(analysis);
        if (extended.Attributes.Count == analysis.Links.Length) return analysis;
        var all = AttributeAssociation.Compute(extended, act.Scored, policy);
        var links = analysis.Links.Concat(all.Skip(analysis.Links.Length)).ToArray();
        var groups = analysis.Groups.ToList();
        var gaps = new Dictionary<int, Measure>(analysis.Gaps);
        foreach (var link in links.Skip(analysis.Links.Length))
        {
            var (g, gap) = GroupAccuracyAnalysis.Compute(extended, act, link, policy);
            groups.AddRange(g);
            if (gap is not null) gaps[link.Attribute] = gap;
        }
        return analysis with { Links = links, Groups = groups, Gaps = gaps };
    }

    /// <summary>
    /// Strongest first within each cue (attribute value), then the cues taken in turn, so that the first findings a
    /// reviewer reads cover every cue instead of forty units of the loudest one.
    /// </summary>
    public static List<FindingCore> Interleave(IEnumerable<FindingCore> findings)
    {
        var byCue = findings
            .GroupBy(f => (f.Attribute, f.Value))
            .Select(g => g.OrderByDescending(f => f.Test.Auroc).ThenBy(f => f.Test.PValue).ThenBy(f => f.Unit).ToList())
            .OrderByDescending(g => g.Count).ThenByDescending(g => g[0].Test.Auroc).ToList();
        var result = new List<FindingCore>();
        for (int rank = 0; byCue.Any(g => rank < g.Count); rank++)
            foreach (var g in byCue)
                if (rank < g.Count) result.Add(g[rank]);
        return result;
    }

    private static FindingCore Describe(ItemTable table, ModelPlan plan, ActivationResult act, AssociationTest test, double q)
    {
        var (slice, channel) = act.Locate(test.Unit);
        var top = act.Top.Sorted(test.Unit);
        int a = test.Attribute, v = test.Value;
        int known = 0, withValue = 0, allKnown = 0, allWith = 0;
        foreach (var p in top)
        {
            int val = table.Items[p.Item].AttributeValues[a];
            if (val < 0) continue;
            known++;
            if (val == v) withValue++;
        }
        foreach (var item in table.Items)
        {
            int val = item.AttributeValues[a];
            if (!act.Scored[item.Index] || val < 0) continue;
            allKnown++;
            if (val == v) allWith++;
        }
        double baseRate = allKnown == 0 ? 0 : allWith / (double)allKnown;
        // Odds of the value among the exemplars against the rest of the set (Haldane's 0.5 when a cell is empty).
        double ea = withValue, eb = known - withValue, ec = allWith - withValue, ed = allKnown - allWith - eb;
        if (ea == 0 || eb == 0 || ec == 0 || ed == 0) { ea += 0.5; eb += 0.5; ec += 0.5; ed += 0.5; }
        double oddsRatio = ea * ed / (eb * ec);
        double tail = known == 0 ? 1 : Hypergeometric.UpperTail(allKnown, allWith, known, withValue);
        int h = plan.Recipe.Height, w = plan.Recipe.Width;
        return new FindingCore(test.Unit, slice, channel, a, v, test, q, top, withValue, known, baseRate, oddsRatio, tail,
            Regions.Name(slice.Layer, top, h, w), Regions.Grid(slice.Layer, top, h, w));
    }
}
