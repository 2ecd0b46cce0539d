using System.Globalization;
using AuditSvc.Core.Activations;
using AuditSvc.Core.Analysis;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;

namespace AuditSvc.Core.Audits;

/// <summary>Everything one audit produced, before it is written out.</summary>
public sealed record AuditInputs(
    ItemTable Table,
    ModelPlan Plan,
    ActivationResult Act,
    AnalysisResult Analysis,
    IReadOnlyList<CueIntervention> Interventions,
    IReadOnlyList<PlaceCandidate> Candidates,
    AuditPolicy Policy,
    double PassSeconds,
    double InterventionSeconds,
    int InterventionRuns,
    int BatchSize,
    DateTimeOffset CreatedAt)
{
    public int InferenceThreads { get; init; }

    public int DecodeThreads { get; init; }

    public string? Reduce { get; init; }
}

/// <summary>Turns the engine's results into the audit document: measures, leakage, verdict, findings, cautions.</summary>
public static class AuditAssembler
{
    public const string SchemaVersion = "1.0";
    public const string Tool = "auditsvc";

    public static AuditResult Build(AuditInputs x)
    {
        var t = x.Table;
        var attributes = new List<AttributeReport>();
        var reasons = new List<VerdictReason>();
        bool block = false;
        foreach (var link in x.Analysis.Links)
        {
            var name = t.Attributes[link.Attribute].Name;
            var measures = new List<Measure>();
            if (x.Analysis.Gaps.TryGetValue(link.Attribute, out var gap)) measures.Add(gap);
            foreach (var iv in x.Interventions.Where(i => i.Attribute == link.Attribute))
            {
                var cue = $"{name}={t.Attributes[link.Attribute].Values[iv.Value]} → {t.Labels[iv.CueClass]}";
                if (iv.Occlusion is { } o) measures.Add(o with { Detail = cue + ": " + o.Detail });
                if (iv.Transplant is { } tr) measures.Add(tr with { Detail = cue + ": " + tr.Detail });
            }
            var (verdict, attrVerdict, leakage, why) = Verdicts.Decide(new AttributeEvidence(name, link.Confounded, measures), x.Policy);
            block |= verdict == Verdicts.Block;
            reasons.AddRange(why);
            int tests = x.Analysis.Scan.Tests.Count(s => s.Attribute == link.Attribute);
            int findings = x.Analysis.Findings.Count(f => f.Attribute == link.Attribute);
            string? note = link.Confounded ? "confounded with the label: collect counter-examples"
                : findings > 0 && (leakage ?? 0) < x.Policy.ThresholdFor(name) ? "units notice this cue, but the model's decisions do not measurably follow it"
                : null;
            attributes.Add(new AttributeReport(name, Round(link.CramersV), link.Confounded, x.Policy.IsAllowed(name), leakage, x.Policy.ThresholdFor(name),
                attrVerdict, measures, tests, findings, note));
        }
        // Unexplained candidates join the verdict when moving their patch moves decisions more than a neutral
        // patch does (one-sided test of treated against control below 0.05); a single stray move does not count.
        foreach (var c in x.Candidates.Where(c => c.ExplainedBy is null && c.Transplant is { PValue: < 0.05 }))
        {
            var name = "place:" + c.Region;
            if (attributes.Any(a => a.Name == name)) continue;
            var (verdict, attrVerdict, leakage, why) = Verdicts.Decide(new AttributeEvidence(name, false, [c.Transplant!]), x.Policy);
            block |= verdict == Verdicts.Block;
            reasons.AddRange(why);
            attributes.Add(new AttributeReport(name, 0, false, x.Policy.IsAllowed(name), leakage, x.Policy.ThresholdFor(name), attrVerdict, [c.Transplant!], 0, 0,
                $"no attribute column names this cue: units {c.Layer}#{c.Unit} and alike peak at the {c.Region} across {c.LabelsCovered} labels"));
        }
        var findingsOut = x.Analysis.Findings.Select(f => ToFinding(x, f)).ToList();
        return new AuditResult(SchemaVersion, Tool, x.CreatedAt, block ? Verdicts.Block : Verdicts.Pass, reasons,
            ModelSummaryOf(x.Plan), SetSummaryOf(t, x.Act), PassSummaryOf(x), attributes, findingsOut, CueGroupsOf(findingsOut),
            x.Candidates, x.Analysis.Groups, CoverageOf(x, attributes), x.Policy);
    }

    public static Exemplar ExemplarOf(ItemTable t, ModelPlan plan, LayerInfo layer, Peak p, int attribute)
    {
        var item = t.Items[p.Item];
        string? value = attribute >= 0 && item.AttributeValues[attribute] >= 0 ? t.Attributes[attribute].Values[item.AttributeValues[attribute]] : null;
        return new Exemplar(p.Item, item.RelativePath, t.Labels[item.Label], value, p.Score,
            BoxDto.From(Regions.PeakBox(layer, p, plan.Recipe.Height, plan.Recipe.Width)));
    }

    private static Finding ToFinding(AuditInputs x, FindingCore f)
    {
        var t = x.Table;
        var attr = t.Attributes[f.Attribute];
        var combos = f.Top.GroupBy(p => (t.Items[p.Item].Label, t.Items[p.Item].AttributeValues[f.Attribute]))
            .Select(g => new ComboCount(t.Labels[g.Key.Label], g.Key.Item2 >= 0 ? attr.Values[g.Key.Item2] : null, g.Count()))
            .OrderByDescending(c => c.Count).ThenBy(c => c.Label, StringComparer.Ordinal).ToList();
        double share = f.Known == 0 ? 0 : f.WithValue / (double)f.Known;
        return new Finding(f.Layer.Layer.Name, f.Channel, attr.Name, attr.Values[f.Value], Round(f.Test.Auroc), Round(f.Test.Z), f.Test.PValue, f.QValue,
            Round(f.OddsRatio), Round(share), Round(f.BaseRate), Round(f.BaseRate > 0 ? share / f.BaseRate : 0), f.TailP, f.Region, f.Grid, combos,
            f.Top.Take(AuditAnalysis.ShownExemplars).Select(p => ExemplarOf(t, x.Plan, f.Layer.Layer, p, f.Attribute)).ToList(),
            x.Policy.IsAllowed(attr.Name));
    }

    private static List<CueGroup> CueGroupsOf(List<Finding> findings) =>
        findings.GroupBy(f => (f.Attribute, f.Value))
            .Select(g => new CueGroup(g.Key.Attribute, g.Key.Value, g.Count(), g.Select(f => f.Layer).Distinct().ToList(), g.Max(f => f.Auroc),
                g.GroupBy(f => f.Region).OrderByDescending(r => r.Count()).First().Key,
                g.Take(20).Select(f => $"{f.Layer}#{f.Unit}").ToList()))
            .OrderByDescending(g => g.Units).ThenByDescending(g => g.BestAuroc).ToList();

    private static ModelSummary ModelSummaryOf(ModelPlan p) => new(
        p.ModelPath, p.Sha256, p.Recipe.Width, p.Recipe.Height, p.Recipe.Resize == ResizeMode.Stretch ? "stretch" : "shorter-side-center-crop",
        p.Recipe.Mean, p.Recipe.Std, p.Recipe.Order == ChannelOrder.Bgr ? "bgr" : "rgb", p.ClassNames, p.Batch == BatchMode.Batched ? "batched" : "concurrent-single",
        p.ReadLayers.Select(l => new LayerSummary(l.Name, l.OpType, l.Channels, l.Height, l.Width, l.Field.Y, l.Field.X)).ToList());

    private static ImageSetSummary SetSummaryOf(ItemTable t, ActivationResult act)
    {
        var labels = t.Labels.Select((l, i) => new ValueCount(l, t.Items.Count(it => it.Label == i && act.Scored[it.Index]))).ToList();
        var attrs = t.Attributes.Select((a, ai) => new AttributeSummary(a.Name, a.Numeric, t.Items.Count(it => it.AttributeValues[ai] < 0),
            a.Values.Select((v, vi) => new ValueCount(v, t.Items.Count(it => it.AttributeValues[ai] == vi))).ToList())).ToList();
        var problems = t.Report.Problems.Select(p => new ProblemRow(p.Row, p.File, p.Reason)).ToList();
        return new ImageSetSummary(t.Report.Source, t.Report.RowsRead, t.Report.RowsUsed, problems, labels, attrs);
    }

    private static PassSummary PassSummaryOf(AuditInputs x)
    {
        int scored = x.Act.Scored.Count(s => s);
        var problems = x.Act.Problems.Select(p => new ProblemRow(x.Table.Items[p.Item].Row, p.File, p.Reason)).ToList();
        return new PassSummary(x.Table.Items.Count, scored, x.Act.UnitCount, x.Act.Top.N, Round(x.PassSeconds), Round(x.Table.Items.Count / Math.Max(1e-9, x.PassSeconds)),
            x.BatchSize, problems, Round(x.InterventionSeconds), x.InterventionRuns)
        {
            InferenceThreads = x.InferenceThreads,
            DecodeThreads = x.DecodeThreads,
            Reduce = x.Reduce,
        };
    }

    private static Coverage CoverageOf(AuditInputs x, List<AttributeReport> attributes)
    {
        var inv = CultureInfo.InvariantCulture;
        var tested = new List<string>
        {
            x.Table.Attributes.Count == 0
                ? string.Create(inv, $"{x.Act.UnitCount} units in {x.Plan.ReadLayers.Count} layers ({string.Join(", ", x.Plan.ReadLayers.Select(l => l.Name))}); the set has no attribute columns, so only cues at a fixed place could be looked for")
                : string.Create(inv, $"{x.Act.UnitCount} units in {x.Plan.ReadLayers.Count} layers ({string.Join(", ", x.Plan.ReadLayers.Select(l => l.Name))}) against every value of {x.Table.Attributes.Count} attribute columns, label held fixed ({x.Analysis.Scan.Tests.Length} tests, FDR {x.Policy.FdrLevel})"),
            string.Create(inv, $"accuracy per (label, attribute value) group of at least {x.Policy.MinGroupSize} images, cue-aligned against cue-conflicting"),
            string.Create(inv, $"occlusion and transplant of exemplar patches for cues found in spatial layers ({x.InterventionRuns} model runs)"),
            "units whose peaks sit at one fixed place across labels (cues with no column)",
        };
        var notTested = new List<string>
        {
            "cues that are neither an attribute column nor a fixed-place pattern (for example a colour cast or texture nobody labelled)",
            "layers other than those read, and interactions between attributes",
            "how the model behaves on images unlike this set (other sites, devices, populations, time periods)",
        };
        if (x.Table.Attributes.Count == 0)
            notTested.Insert(0, "every cue that does not sit at a fixed place (background, colour cast, lighting, device): the set has no attribute columns to test them against; add columns such as site or camera");
        foreach (var a in attributes.Where(a => a.Confounded)) notTested.Add($"{a.Name}: confounded with the label, cannot be separated from the class in this set");
        foreach (var a in attributes.Where(a => a.Measures.Count == 0)) notTested.Add($"{a.Name}: no behavioural measure could be taken (groups too small or no local cue)");
        var cautions = new List<string>
        {
            "An audit can show that a model leans on a cue; it cannot prove that no shortcut exists. A pass means only that none of the tested cues reached the policy's threshold on this image set.",
            "The statistics describe this image set. A set that lacks counter-examples (images where a cue and the label disagree) hides reliance instead of clearing it.",
            "For safety-relevant uses (medical, inspection, food, anything that affects people), this audit does not replace the domain's own validation, regulatory review and licensed professional judgement; treat it as one piece of evidence for them.",
        };
        return new Coverage(tested, notTested, cautions);
    }

    private static double Round(double v) => double.IsFinite(v) ? Math.Round(v, 6) : v;
}
