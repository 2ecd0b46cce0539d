using System.Text.Json;
using System.Text.Json.Nodes;
using AuditSvc.Core.Audits;
using Json.Schema;

namespace AuditSvc.Core.Tests.Audits;

public sealed class AuditJsonTests
{
    // One schema instance per test run: the validator registers a schema by its $id.
    private static readonly Lazy<JsonSchema> Schema = new(() =>
        JsonSchema.FromText(File.ReadAllText(Path.Combine(AppContext.BaseDirectory, "schemas", "audit.schema.json"))));

    private static EvaluationResults Validate(string json)
    {
        using var doc = JsonDocument.Parse(json);
        return Schema.Value.Evaluate(doc.RootElement, new EvaluationOptions { OutputFormat = OutputFormat.List });
    }

    private static string Errors(EvaluationResults r) =>
        string.Join("\n", (r.Details ?? []).Where(d => d.Errors is { Count: > 0 })
            .SelectMany(d => d.Errors!.Select(e => $"{d.InstanceLocation} ({d.EvaluationPath}): {e.Key} {e.Value}")));

    [Fact]
    public void Serialize_SampleResult_ValidatesAgainstSchema()
    {
        var json = AuditJson.Serialize(SampleAudit.Create());
        var r = Validate(json);
        Assert.True(r.IsValid, Errors(r));
    }

    [Fact]
    public void Serialize_SampleResult_UsesSnakeCaseAndStringEnums()
    {
        var node = JsonNode.Parse(AuditJson.Serialize(SampleAudit.Create()))!;
        Assert.Equal("block", (string?)node["verdict"]);
        Assert.NotNull(node["image_set"]!["rows_read"]);
        Assert.NotNull(node["findings"]![0]!["odds_ratio"]);
        Assert.Equal("block", (string?)node["policy"]!["confounded"]);
        // Attribute names are data, not property names: the dictionary keeps them as given.
        Assert.NotNull(node["policy"]!["attribute_thresholds"]!["backdrop"]);
    }

    [Fact]
    public void Serialize_NonFiniteNumbers_WritesNull()
    {
        var node = JsonNode.Parse(AuditJson.Serialize(SampleAudit.Create()))!;
        Assert.Null(node["findings"]![1]!["odds_ratio"]); // +Infinity
        Assert.Null(node["attributes"]![3]!["cramers_v"]); // NaN
        Assert.Null(node["attributes"]![2]!["leakage"]); // not measured
    }

    [Fact]
    public void Deserialize_SerializedResult_RoundTrips()
    {
        var original = SampleAudit.Create();
        var json = AuditJson.Serialize(original);
        var back = AuditJson.Deserialize(json);
        Assert.Equal(json, AuditJson.Serialize(back));
        Assert.Equal(original.Findings.Count, back.Findings.Count);
        Assert.True(double.IsNaN(back.Findings[1].OddsRatio)); // null reads back as NaN
        Assert.True(double.IsNaN(back.Attributes[3].CramersV));
        Assert.Null(back.Attributes[2].Leakage);
        Assert.Equal(SampleAudit.NastyLabel, back.Findings[0].Value);
        Assert.Equal(original.Policy.ThresholdFor("backdrop"), back.Policy.ThresholdFor("backdrop"));
        Assert.Equal(original.CreatedAt, back.CreatedAt);
    }

    [Fact]
    public void Validate_MissingVerdict_Fails()
    {
        var node = JsonNode.Parse(AuditJson.Serialize(SampleAudit.Create()))!.AsObject();
        node.Remove("verdict");
        Assert.False(Validate(node.ToJsonString()).IsValid);
    }

    [Fact]
    public void Validate_UnknownVerdict_Fails()
    {
        var node = JsonNode.Parse(AuditJson.Serialize(SampleAudit.Create()))!.AsObject();
        node["verdict"] = "maybe";
        Assert.False(Validate(node.ToJsonString()).IsValid);
    }

    [Fact]
    public void Validate_FindingWithoutQValue_Fails()
    {
        var node = JsonNode.Parse(AuditJson.Serialize(SampleAudit.Create()))!.AsObject();
        node["findings"]![0]!.AsObject().Remove("q_value");
        Assert.False(Validate(node.ToJsonString()).IsValid);
    }

    [Fact]
    public void Deserialize_NotAnAudit_ThrowsInputErrorNamingTheDocument()
    {
        var e = Assert.Throws<AuditInputException>(() => AuditJson.Deserialize("{\"verdict\": 3}"));
        Assert.Contains("audit.json", e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Write_Path_WritesTheSerializedDocument()
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-json-" + Guid.NewGuid().ToString("N"));
        try
        {
            var path = Path.Combine(dir, "out", "audit.json");
            var result = SampleAudit.Create();
            AuditJson.Write(path, result);
            Assert.Equal(AuditJson.Serialize(result), File.ReadAllText(path).TrimEnd('\n'));
        }
        finally
        {
            if (Directory.Exists(dir)) Directory.Delete(dir, true);
        }
    }
}
