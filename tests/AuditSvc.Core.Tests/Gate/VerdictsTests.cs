using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;

namespace AuditSvc.Core.Tests.Gate;

public class VerdictsTests
{
    private static Measure M(string name, double value, double low) => new(name, value, 100, low, value + 0.1, null, "");

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
}
