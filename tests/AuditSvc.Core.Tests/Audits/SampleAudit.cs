using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.Models;

namespace AuditSvc.Core.Tests.Audits;

/// <summary>
/// An invented audit result (no real model or image set behind it) that exercises every part of the
/// document: a blocking attribute, an allowed one, a confounded one, non-finite statistics, a label that
/// needs HTML escaping, and more findings than the report shows.
/// </summary>
internal static class SampleAudit
{
    public const string NastyLabel = "<b>&\"x\"";

    public static AuditResult Create(int findings = 33)
    {
        string[] labels = ["healthy", "blight", NastyLabel];
        var exemplars = Enumerable.Range(0, 9).Select(i => new Exemplar(
            Item: i * 7, Image: $"images/leaf_{i:000}.png", Label: labels[i % 3], Value: i % 4 == 0 ? "no" : "yes",
            Score: 12.5f - i, Box: new BoxDto(140 + i % 3, 4 + i % 2, 70, 70))).ToList();

        var gap = new Measure("accuracy_gap", 0.41, 212, 0.30, 0.52, 3.2e-9, "aligned 0.97 vs conflicting 0.56 over 6 strata") { QValue = 6.4e-9 };
        var transplant = new Measure("transplant", 0.37, 90, 0.28, 0.47, 1e-7, "stamp region pasted into 90 images without it") { QValue = 3e-7 };
        var occlusion = new Measure("occlusion", 0.12, 90, 0.07, 0.20, 0.004, "stamp region filled with the set mean") { QValue = 0.008 };
        var region = new RegionReport("local", new BoxDto(180, 200, 40, 20), 0.016, 4.2, 0.6, 300, 900, 224, 224, 4, 4, [0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 10, 0, 0, 20, 100]);

        var attributes = new List<AttributeReport>
        {
            new("stamp", 0.62, false, false, 0.41, 0.2, "block", [gap, transplant, occlusion], 384, findings, null)
            {
                Cues = [new CueReport("yes", NastyLabel, region, 360, null)],
            },
            new("site", 0.18, false, true, 0.05, 0.2, "pass", [new Measure("accuracy_gap", 0.05, 400, -0.02, 0.12, 0.21, "aligned vs conflicting")], 512, 0, "allowed by policy"),
            new("camera", 0.97, true, false, null, 0.2, "block", [], 0, 0, "nearly determines the label: collect counter-examples"),
            new("backdrop", double.NaN, false, false, 0.02, 0.3, "pass", [new Measure("colour_transfer", 0.02, 50, 0.0, 0.1, null, "")], 64, 0, null)
            {
                Cues = [new CueReport("striped", null, region with { Kind = "global", Share = 0.7 }, 100, "backdrop=striped: the region covers 70% of the image")],
            },
            new("place:bottom-left", 0, false, false, 0.3, 0.2, "block", [transplant with { QValue = 1e-6 }, gap with { Gating = false }], 0, 0, "no attribute column names this cue") { Inferred = true },
        };

        var list = Enumerable.Range(0, findings).Select(i => new Finding(
            Layer: i % 2 == 0 ? "layer3/conv2" : "layer4/conv1", Unit: 10 + i, Attribute: "stamp", Value: i == 0 ? NastyLabel : "yes",
            Auroc: 0.97 - i * 0.003, Z: 7.1, PValue: 1e-12, QValue: 2.4e-10 * (i + 1), OddsRatio: i == 1 ? double.PositiveInfinity : 14.2,
            ExemplarShare: 0.96, BaseRate: 0.48, Lift: 2.0, ExemplarTailP: 1.1e-8, Region: "top-right",
            PeakGrid: [0, 1, 31, 0, 0, 2, 0, 0, 1],
            ExemplarGroups: [new ComboCount("healthy", "yes", 20), new ComboCount("blight", "yes", 10), new ComboCount(NastyLabel, null, 5)],
            Exemplars: exemplars, Allowed: false)).ToList();

        return new AuditResult(
            SchemaVersion: "1",
            Tool: "auditsvc 0.1.0",
            CreatedAt: new DateTimeOffset(2025, 3, 14, 9, 30, 0, TimeSpan.Zero),
            Verdict: "block",
            Reasons:
            [
                new VerdictReason("leakage", "stamp", "accuracy gap", 0.41, 0.2, "stamp reaches leakage 0.41 (threshold 0.20)"),
                new VerdictReason("confounded", "camera", null, 0.97, 0.95, "camera is confounded with the label"),
            ],
            Model: new ModelSummary("models/leaf & <stem>.onnx", "9f2c4e1ab37d55c0e8f1a2b3c4d5e6f708192a3b4c5d6e7f8091a2b3c4d5e6f7", 224, 224, "stretch",
                [0.485f, 0.456f, 0.406f], [0.229f, 0.224f, 0.225f], "rgb", labels,
                "dynamic", [new LayerSummary("layer3/conv2", "Conv", 128, 28, 28, new RfAxis(99, 8, 3.5), new RfAxis(99, 8, 3.5))]),
            ImageSet: new ImageSetSummary("data/manifest.csv", 1210, 1200,
                Enumerable.Range(0, 60).Select(i => new ProblemRow(i + 2, $"images/broken_{i}.png", "cannot decode: not an image")).Append(new ProblemRow(null, "x<y>.png", "missing \"label\"")).ToList(),
                [new ValueCount("healthy", 600), new ValueCount("blight", 500), new ValueCount(NastyLabel, 100)],
                [new AttributeSummary("stamp", false, 0, [new ValueCount("yes", 580), new ValueCount("no", 620)])]),
            Pass: new PassSummary(1200, 1198, 1024, 24, 41.3, 29.0, 32, [new ProblemRow(77, "images/odd.png", "truncated file")], 6.2, 300),
            Attributes: attributes,
            Findings: list,
            CueGroups: [new CueGroup("stamp", "yes", findings, ["layer3/conv2", "layer4/conv1"], 0.97, "top-right", ["layer3/conv2#10", "layer4/conv1#11"])],
            Candidates:
            [
                new PlaceCandidate("place:bottom-left", "place:bottom-left", "layer3/conv2", 77, "bottom-left", 0.81, 3, ["layer3/conv2#77", "layer4/conv1#3"], 2.5, 0.71, 140, exemplars.Take(4).ToList(), null),
                new PlaceCandidate("place:top-right", null, "layer3/conv2", 12, "top-right", 0.7, 2, ["layer3/conv2#12", "layer3/conv2#13"], 1.5, 0.5, 80, exemplars.Take(2).ToList(), "stamp=yes"),
            ],
            Groups:
            [
                new GroupAccuracy("stamp", "healthy", "yes", 400, 392, 0.98, "aligned"),
                new GroupAccuracy("stamp", "healthy", "no", 200, 112, 0.56, "conflicting"),
                new GroupAccuracy("stamp", NastyLabel, "yes", 50, 45, 0.9, "aligned"),
            ],
            Coverage: new Coverage(
                ["stamp", "site", "backdrop"],
                ["camera (confounded with the label)", "cues not listed as attributes, except fixed-place candidates"],
                ["An audit can show that a model leans on a cue; it cannot prove that no shortcut exists.",
                 "For safety-relevant uses, defer to the domain's own validation and licensed practice."]),
            Policy: new AuditPolicy
            {
                AllowedAttributes = ["site"],
                AttributeThresholds = new Dictionary<string, double> { ["backdrop"] = 0.3 },
            });
    }
}
