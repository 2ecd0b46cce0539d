using AuditSvc.Core.Gate;

namespace AuditSvc.Core.Tests.Gate;

/// <summary>Policies made wrong on purpose: each is refused with the field named, never read half-way or silently.</summary>
public class PolicyHostileTests
{
    [Theory]
    [InlineData("""{ "leakage_threshold": "high" }""", "leakage_threshold")]
    [InlineData("""{ "min_group_size": 2.5 }""", "min_group_size")]
    [InlineData("""{ "allowed_attributes": "stamp" }""", "allowed_attributes")]
    [InlineData("""{ "attribute_thresholds": { "stamp": "x" } }""", "attribute_thresholds.stamp")]
    [InlineData("""{ "leakage_threshold": NaN }""", "leakage_threshold")]
    [InlineData("""{ "leakage_threshold": "NaN" }""", "leakage_threshold")]
    [InlineData("""{ "leakage_threshold": 1e400 }""", "leakage_threshold")]
    [InlineData("""{ "leakage_threshold": 0.2, "leakage_threshold": 0.9 }""", "leakage_threshold")]
    [InlineData("""{ "attribute_thresholds": { "site": 0.3, "site": 0.5 } }""", "site")]
    [InlineData("""{ "gate_levle": 0.1 }""", "gate_levle")]
    [InlineData("""{ "attribute_thresholds": { "a": { "b": { "c": { "d": { "e": { "f": { "g": { "h": 1 } } } } } } } } }""", "attribute_thresholds.a")]
    public void Parse_HostilePolicy_IsRefusedNamingTheField(string json, string field)
    {
        var e = Assert.Throws<AuditInputException>(() => PolicyFile.Parse(json, "p.json"));
        Assert.Equal("p.json", e.Subject);
        Assert.Contains(field, e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Parse_DeepNesting_IsRefusedWithoutRecursingFar()
    {
        var json = "{ \"allowed_attributes\": " + new string('[', 100_000) + new string(']', 100_000) + " }";
        var e = Assert.Throws<AuditInputException>(() => PolicyFile.Parse(json, "p.json"));
        Assert.Contains("allowed_attributes", e.Message, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("""{ "allowed_attributes": ["stmap"] }""", "allowed_attributes", "'stmap'", "closest: 'stamp'")]
    [InlineData("""{ "attribute_thresholds": { "Camera_ID": 0.3 } }""", "attribute_thresholds", "'Camera_ID'", "closest: 'camera'")]
    public void CheckAttributes_NameOfNoColumn_IsRefusedNamingTheClosest(string json, string field, string name, string closest)
    {
        var e = Assert.Throws<AuditInputException>(() => PolicyFile.CheckAttributes(PolicyFile.Parse(json), ["stamp", "belt", "camera"], "policy"));
        Assert.Contains(field, e.Message, StringComparison.Ordinal);
        Assert.Contains(name, e.Message, StringComparison.Ordinal);
        Assert.Contains(closest, e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void CheckAttributes_ColumnsAnyCaseAndPlaceCues_AreAccepted() =>
        PolicyFile.CheckAttributes(PolicyFile.Parse("""{ "allowed_attributes": ["STAMP", "place:top-left"], "attribute_thresholds": { "belt": 0.3 } }"""),
            ["stamp", "belt"], "policy");

    [Fact]
    public void CheckAttributes_SetWithoutColumns_IsNotChecked() =>
        // One release policy serves bare sets too (the demo's bare audit allows defect_area): nothing to misspell there.
        PolicyFile.CheckAttributes(PolicyFile.Parse("""{ "allowed_attributes": ["site"] }"""), [], "policy");
}
