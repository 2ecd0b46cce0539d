using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;

namespace AuditSvc.Core.Tests.Audits;

public class AuditComparisonTests
{
    private static AuditResult WithLeakage(AuditResult r, string attribute, double leakage) =>
        r with { Attributes = r.Attributes.Select(a => a.Name == attribute ? a with { Leakage = leakage } : a).ToList() };

    [Fact]
    public void Compare_LeakageRoseBeyondPolicyLimit_Blocks()
    {
        var before = SampleAudit.Create() with { Verdict = "pass" };
        var name = before.Attributes[0].Name;
        before = WithLeakage(before, name, 0.05);
        var after = WithLeakage(before, name, 0.15);
        var policy = new AuditPolicy { MaxLeakageRise = 0.08 };
        var c = AuditComparer.Compare(before, after, policy);
        Assert.Equal("block", c.Verdict);
        var reason = Assert.Single(c.Reasons);
        Assert.Equal(name, reason.Attribute);
        Assert.Equal(0.1, c.Leakage.Single(l => l.Attribute == name).Change, 6);
    }

    [Fact]
    public void Compare_NoRiseLimit_PassesOnThePassingNewAudit()
    {
        var before = SampleAudit.Create() with { Verdict = "pass" };
        var c = AuditComparer.Compare(before, before, new AuditPolicy());
        Assert.Equal("pass", c.Verdict);
        Assert.Empty(c.NewCues);
        Assert.Empty(c.NewFindings);
        Assert.True(c.SameLayers);
    }

    [Fact]
    public void Compare_CueOnlyInNewAudit_IsListedAsNew()
    {
        var before = SampleAudit.Create() with { Verdict = "pass" };
        var after = before with { CueGroups = [.. before.CueGroups, new CueGroup("site", "east", 4, ["l"], 0.9, "top-left", ["l#1"])] };
        var c = AuditComparer.Compare(before, after, new AuditPolicy());
        var cue = Assert.Single(c.NewCues);
        Assert.Equal(("site", "east", 4), (cue.Attribute, cue.Value, cue.UnitsAfter));
    }
}
