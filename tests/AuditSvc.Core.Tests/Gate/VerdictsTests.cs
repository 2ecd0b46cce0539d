using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;

namespace AuditSvc.Core.Tests.Gate;

public class VerdictsTests
{
    private static Measure M(string name, double value, double low, double q = 1e-6) => new(name, value, 100, low, value + 0.1, q, "") { QValue = q };

    [Fact]
    public void Decide_MeasureOverThresholdAndClearOfZero_Blocks()
    {
        var (verdict, attr, leakage, reasons) = Verdicts.Decide(new AttributeEvidence("site", false, [M("accuracy_gap", 0.3, 0.2), M("transplant", 0.1, 0.05)]), new AuditPolicy());
        Assert.Equal(("block", "block", 0.3), (verdict, attr, leakage));
        Assert.Equal("accuracy_gap", Assert.Single(reasons).Measure);
    }

    [Fact]
    public void Decide_NoisyMeasureWhoseIntervalTouchesZero_DoesNotBlockButIsTheLeakage()
    {
        var (verdict, _, leakage, reasons) = Verdicts.Decide(new AttributeEvidence("site", false, [M("transplant", 0.3, -0.05)]), new AuditPolicy());
        Assert.Equal("pass", verdict);
        Assert.Equal(0.3, leakage);
        Assert.Empty(reasons);
    }

    [Fact]
    public void Decide_AllowedAttribute_NeverBlocks()
    {
        var (verdict, attr, _, _) = Verdicts.Decide(new AttributeEvidence("grade", true, [M("accuracy_gap", 0.9, 0.8)]), new AuditPolicy { AllowedAttributes = ["grade"] });
        Assert.Equal(("pass", "allowed"), (verdict, attr));
    }

    [Theory]
    [InlineData(ConfoundedAction.Block, "block", "block")]
    [InlineData(ConfoundedAction.Warn, "pass", "warn")]
    public void Decide_ConfoundedAttribute_FollowsThePolicyAndIsAlwaysListed(ConfoundedAction action, string verdict, string attrVerdict)
    {
        var result = Verdicts.Decide(new AttributeEvidence("site", true, []), new AuditPolicy { Confounded = action });
        Assert.Equal((verdict, attrVerdict), (result.Verdict, result.AttributeVerdict));
        Assert.Contains("counter-examples", Assert.Single(result.Reasons).Message);
    }

    [Fact]
    public void Decide_PerAttributeThreshold_ReplacesTheDefault()
    {
        var policy = new AuditPolicy { AttributeThresholds = new Dictionary<string, double> { ["site"] = 0.5 } };
        Assert.Equal("pass", Verdicts.Decide(new AttributeEvidence("site", false, [M("accuracy_gap", 0.3, 0.2)]), policy).Verdict);
    }

    [Fact]
    public void Decide_AdjustedPAboveTheGateLevel_DoesNotBlock()
    {
        var (verdict, _, leakage, reasons) = Verdicts.Decide(new AttributeEvidence("site", false, [M("transplant", 0.4, 0.1, q: 0.08)]), new AuditPolicy());
        Assert.Equal("pass", verdict);
        Assert.Equal(0.4, leakage);
        Assert.Empty(reasons);
    }

    [Fact]
    public void Decide_DescriptionOnlyMeasure_NeverBlocksNorCountsAsLeakage()
    {
        var (verdict, _, leakage, _) = Verdicts.Decide(new AttributeEvidence("place:top", false, [M("accuracy_gap", 0.9, 0.8) with { Gating = false }]), new AuditPolicy());
        Assert.Equal("pass", verdict);
        Assert.Null(leakage);
    }

    [Fact]
    public void Adjust_BenjaminiHochbergAcrossAttributes_MatchesThePublishedExample()
    {
        // Benjamini & Hochberg (1995) example p-values, spread over three attributes; adjusted values as SciPy's
        // false_discovery_control documents for the same example (REFERENCES.md).
        double[] p = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.000];
        double[] q = [0.0015, 0.003, 0.0095, 0.035625, 0.0603, 0.06385714, 0.06385714, 0.0645, 0.0765, 0.486, 0.58118182, 0.714875, 0.75323077, 0.81321429, 1];
        var measures = p.Select(v => new Measure("transplant", 0.5, 10, 0.1, 0.9, v, "")).ToList();
        var untested = new Measure("accuracy_gap", 0.1, 10, -0.1, 0.3, null, "");
        var adjusted = Verdicts.Adjust([measures.Take(5).ToList(), [.. measures.Skip(5).Take(5), untested], measures.Skip(10).ToList()]);
        var flat = adjusted.SelectMany(a => a).Where(m => m.PValue is not null).ToList();
        for (int i = 0; i < p.Length; i++) Assert.Equal(q[i], flat[i].QValue!.Value, 6);
        Assert.Null(adjusted[1].Single(m => m.Name == "accuracy_gap").QValue);
    }
}
