using System.Text.Json;
using AuditSvc.Core.Gate;
using Json.Schema;

namespace AuditSvc.Core.Tests.Gate;

public class PolicyFileTests
{
    private static readonly Lazy<JsonSchema> Schema = new(() =>
        JsonSchema.FromText(File.ReadAllText(Path.Combine(AppContext.BaseDirectory, "schemas", "policy.schema.json"))));

    private static bool Valid(string json)
    {
        using var doc = JsonDocument.Parse(json);
        return Schema.Value.Evaluate(doc.RootElement).IsValid;
    }

    [Fact]
    public void Serialize_DefaultPolicy_ValidatesAgainstSchemaAndRoundTrips()
    {
        var json = PolicyFile.Serialize(new AuditPolicy());
        Assert.True(Valid(json), json);
        var back = PolicyFile.Parse(json);
        Assert.Equal(0.2, back.LeakageThreshold);
        Assert.Equal(ConfoundedAction.Block, back.Confounded);
    }

    [Fact]
    public void Parse_FullPolicy_ReadsEveryField()
    {
        var json = """
            { "leakage_threshold": 0.1, "attribute_thresholds": { "site": 0.3 }, "allowed_attributes": ["grade"],
              "fdr_level": 0.01, "min_auroc": 0.7, "min_group_size": 20, "min_per_side": 5, "confounded_v": 0.9,
              "confounded": "warn", "intervention_budget": 100, "max_leakage_rise": 0.05 }
            """;
        Assert.True(Valid(json));
        var p = PolicyFile.Parse(json);
        Assert.Equal(0.3, p.ThresholdFor("site"));
        Assert.Equal(0.1, p.ThresholdFor("camera"));
        Assert.True(p.IsAllowed("GRADE"));
        Assert.Equal(ConfoundedAction.Warn, p.Confounded);
        Assert.Equal(0.05, p.MaxLeakageRise);
    }

    [Theory]
    [InlineData("""{ "leakage_threshold": 0 }""", "leakage_threshold")]
    [InlineData("""{ "min_auroc": 0.3 }""", "min_auroc")]
    [InlineData("""{ "unknown_field": 1 }""", "unknown_field")]
    [InlineData("""{ "confounded": "maybe" }""", "confounded")]
    [InlineData("""{ "allowed_attributes": ["a", "A"] }""", "allowed_attributes")]
    [InlineData("""{ "allowed_attributes": ["site"], "attribute_thresholds": { "site": 0.5 } }""", "attribute_thresholds.site")]
    [InlineData("""[1, 2]""", "policy")]
    public void Parse_BadPolicy_NamesTheField(string json, string field)
    {
        var e = Assert.Throws<AuditInputException>(() => PolicyFile.Parse(json, "policy.json"));
        Assert.Contains(field, e.Message);
        Assert.StartsWith("policy.json", e.Message);
    }
}
