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
    IReadOnlyList<CueEvidence> Evidence,
    IReadOnlyList<PlaceCue> PlaceCues,
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
        var inferred = x.PlaceCues.Where(c => c.Attribute >= 0).ToDictionary(c => c.Attribute);
        // Measures of every attribute first: the gate adjusts their p-values as one family.
        var perAttribute = new List<IReadOnlyList<Measure>>();
        foreach (var link in x.Analysis.Links)
        {
            var measures = new List<Measure>();
            if (x.Analysis.Gaps.TryGetValue(link.Attribute, out var gap))
                measures.Add(inferred.ContainsKey(link.Attribute)
                    ? gap with { Gating = false, Detail = gap.Detail + "; description only: the attribute is read off the model's own units, so a gap may come from the object those units also see" }
                    : gap);
            foreach (var e in x.Evidence.Where(e => e.Attribute == link.Attribute)) measures.AddRange(e.Measures);
            perAttribute.Add(measures);
        }
        var adjusted = Verdicts.Adjust(perAttribute);
        var attributes = new List<AttributeReport>();
        var reasons = new List<VerdictReason>();
        bool block = false;
        for (int li = 0; li < x.Analysis.Links.Length; li++)
        {
            var link = x.Analysis.Links[li];
            var name = t.Attributes[link.Attribute].Name;
            var measures = adjusted[li];
            // An inferred pattern that nearly determines the label is more likely the object than a shortcut: the
            // confounded rule (block until counter-examples exist) is for columns someone named, not for guesses.
            bool isInferred = inferred.ContainsKey(link.Attribute);
            var (verdict, attrVerdict, leakage, why) = Verdicts.Decide(new AttributeEvidence(name, link.Confounded && !isInferred, measures), x.Policy);
            block |= verdict == Verdicts.Block;
            reasons.AddRange(why);
            int tests = x.Analysis.Scan.Tests.Count(s => s.Attribute == link.Attribute);
            int findings = x.Analysis.Findings.Count(f => f.Attribute == link.Attribute);
            string? note = link.Confounded && !isInferred ? "confounded with the label: collect counter-examples"
                : inferred.TryGetValue(link.Attribute, out var place)
                    ? string.Create(CultureInfo.InvariantCulture, $"no attribute column names this cue: {place.Units.Count} live units peak at the {place.Region} across {place.LabelsCovered} labels; an image carries it when {place.Layer.Layer.Name}#{place.Channel} scores above {place.Split:0.###} ({place.Carriers} images)")
                        + (link.Confounded ? "; it nearly determines the label, so it may be part of the object: listed, not blocking on that alone" : "")
                : findings > 0 && verdict == Verdicts.Pass ? "units notice this cue, but the model's decisions do not measurably follow it"
                : null;
            var cues = x.Evidence.Where(e => e.Attribute == link.Attribute).Select(e => CueReportOf(t, x.Plan, e)).ToList();
            attributes.Add(new AttributeReport(name, Round(link.CramersV), link.Confounded, x.Policy.IsAllowed(name), leakage, x.Policy.ThresholdFor(name),
                attrVerdict, measures, tests, findings, note) { Inferred = inferred.ContainsKey(link.Attribute), Cues = cues });
        }
        var findingsOut = x.Analysis.Findings.Select(f => ToFinding(x, f)).ToList();
        var candidates = x.PlaceCues.Select(c => CandidateOf(x, c)).ToList();
        return new AuditResult(SchemaVersion, Tool, x.CreatedAt, block ? Verdicts.Block : Verdicts.Pass, reasons,
            ModelSummaryOf(x.Plan), SetSummaryOf(t, x.Act), PassSummaryOf(x), attributes, findingsOut, CueGroupsOf(findingsOut),
            candidates, x.Analysis.Groups, CoverageOf(x, attributes), x.Policy);
    }

    private static CueReport CueReportOf(ItemTable t, ModelPlan plan, CueEvidence e)
    {
        var r = e.Region;
        var region = new RegionReport(r.Kind, r.Box is { } b ? BoxDto.From(b) : null, Round(r.Share), Round(r.Peak), Round(r.Threshold), r.ImagesWith, r.ImagesWithout,
            plan.Recipe.Width, plan.Recipe.Height, r.MapWidth, r.MapHeight, r.Map);
        return new CueReport(t.Attributes[e.Attribute].Values[e.Value], e.CueClass >= 0 ? t.ClassName(e.CueClass) : null, region, e.Runs, e.Note);
    }

    private static PlaceCandidate CandidateOf(AuditInputs x, PlaceCue c) =>
        new(c.Name, c.Attribute >= 0 ? c.Name : null, c.Layer.Layer.Name, c.Channel, c.Region, Round(c.PlaceShare), c.LabelsCovered,
            c.Units.Take(20).Select(u => { var (l, ch) = x.Act.Locate(u); return $"{l.Layer.Name}#{ch}"; }).ToList(),
            Round(c.Split), Round(c.Separability), c.Carriers,
            c.Top.Take(AuditAnalysis.ShownExemplars).Select(p => ExemplarOf(x.Table, x.Plan, c.Layer.Layer, p, -1)).ToList(), c.ExplainedBy)
        { AgreeingUnits = c.Units.Count };

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
        p.ReadLayers.Select(l => new LayerSummary(l.Name, l.OpType, l.Channels, l.Height, l.Width, l.Field.Y, l.Field.X)
        {
            Layout = LayoutName(l.Layout),
            Place = l.PlaceNote,
        }).ToList())
    {
        Notes = p.Notes,
    };

    /// <summary>The layout's name in audit.json, `inspect` and the report.</summary>
    public static string LayoutName(LayerLayout layout) => layout switch
    {
        LayerLayout.ChannelsLast => "channels-last",
        LayerLayout.Tokens => "tokens",
        LayerLayout.Vector => "vector",
        _ => "channels-first",
    };

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
        int columns = x.Table.Attributes.Count - x.PlaceCues.Count(c => c.Attribute >= 0);
        var tested = new List<string>
        {
            columns == 0
                ? string.Create(inv, $"{x.Act.UnitCount} units in {x.Plan.ReadLayers.Count} layers ({string.Join(", ", x.Plan.ReadLayers.Select(l => l.Name))}); the set has no attribute columns, so only cues at a fixed place could be looked for")
                : string.Create(inv, $"{x.Act.UnitCount} units in {x.Plan.ReadLayers.Count} layers ({string.Join(", ", x.Plan.ReadLayers.Select(l => l.Name))}) against every value of {columns} attribute columns, label held fixed ({x.Analysis.Scan.Tests.Length} tests, FDR {x.Policy.FdrLevel})"),
            "accuracy of cue-aligned against cue-conflicting images within labels (direction learnt on one half of the set, measured on the other)",
            string.Create(inv, $"for every value with findings: its region read from the pixels, then paired interventions with a matched control (transplant and occlusion where the region is local, colour transfer where it is global; {x.InterventionRuns} model runs)"),
            "patterns that several live units agree on at one fixed place, as inferred attributes (cues with no column)",
        };
        var notTested = new List<string>
        {
            "cues that are neither an attribute column nor a fixed-place pattern (for example a colour cast or texture nobody labelled)",
            "layers other than those read, and interactions between attributes",
            "how the model behaves on images unlike this set (other sites, devices, populations, time periods)",
        };
        if (columns == 0)
            notTested.Insert(0, "every cue that does not sit at a fixed place (background, colour cast, lighting, device): the set has no attribute columns to test them against; add columns such as site or camera");
        foreach (var a in attributes.Where(a => a.Confounded)) notTested.Add($"{a.Name}: confounded with the label, cannot be separated from the class in this set");
        foreach (var a in attributes.Where(a => a.Measures.Count == 0)) notTested.Add($"{a.Name}: no behavioural measure could be taken (groups too small or no local cue)");
        foreach (var c in attributes.SelectMany(a => a.Cues.Where(c => c.Note is not null).Select(c => c.Note!))) notTested.Add(c);
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
