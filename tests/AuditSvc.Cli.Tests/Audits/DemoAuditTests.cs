using System.Text.Json.Nodes;
using Json.Schema;

namespace AuditSvc.Cli.Tests.Audits;

/// <summary>
/// End to end on the invented demo: the cue-trained model must be blocked with the planted cues on top, the
/// control model must pass, and the independent attribute must show no leakage. Thresholds here are the
/// product's defaults, not tuned to these numbers (see seed-demo/README.md for the models' measured reliance).
/// </summary>
[Collection(nameof(DemoAudits))]
public class DemoAuditTests(DemoAuditFixture demo)
{
    private static JsonObject Attribute(JsonNode audit, string name) =>
        audit["attributes"]!.AsArray().Single(a => (string)a!["name"]! == name)!.AsObject();

    private static double Leakage(JsonNode audit, string name) => (double?)Attribute(audit, name)["leakage"] ?? 0;

    private static double Measure(JsonNode audit, string attribute, string measure) =>
        (double)Attribute(audit, attribute)["measures"]!.AsArray().Single(m => (string)m!["name"]! == measure)!["value"]!;

    /// <summary>An intervention measure of one cue (attribute=value); null when that cue was not intervened on.</summary>
    private static JsonObject? CueMeasure(JsonNode audit, string cue, string measure) =>
        Attribute(audit, cue.Split('=')[0])["measures"]!.AsArray()
            .SingleOrDefault(m => (string)m!["name"]! == measure && ((string)m["detail"]!).StartsWith(cue + ":", StringComparison.Ordinal))?.AsObject();

    private static JsonObject Region(JsonNode audit, string attribute, string value) =>
        Attribute(audit, attribute)["cues"]!.AsArray().Single(c => (string)c!["value"]! == value)!["region"]!.AsObject();

    [Fact]
    public void Audit_CueTrainedModel_IsBlockedWithExitStatus1()
    {
        Assert.Equal(1, demo.Cue.Status);
        Assert.Equal("block", (string)demo.Cue.Json["verdict"]!);
        Assert.Contains("verdict: block", demo.Cue.Out);
    }

    [Fact]
    public void Audit_CueTrainedModel_PlantedCuesAreTheTopAttributes()
    {
        var ranked = demo.Cue.Json["attributes"]!.AsArray().OrderByDescending(a => (double?)a!["leakage"] ?? 0).Select(a => (string)a!["name"]!).Take(2);
        Assert.Equal(["belt", "stamp"], ranked.Order());
        Assert.Equal("block", (string)Attribute(demo.Cue.Json, "stamp")["verdict"]!);
        Assert.Equal("block", (string)Attribute(demo.Cue.Json, "belt")["verdict"]!);
    }

    [Fact]
    public void Audit_CueTrainedModel_StampFindingsSitBottomRight()
    {
        var stamp = demo.Cue.Json["findings"]!.AsArray().Where(f => (string)f!["attribute"]! == "stamp" && (string)f["value"]! == "yes").ToList();
        Assert.NotEmpty(stamp);
        var spatial = stamp.Where(f => (string)f!["region"]! != "whole-image").ToList();
        int bottomRight = spatial.Count(f => (string)f!["region"]! == "bottom-right");
        Assert.True(bottomRight > spatial.Count / 2, $"{bottomRight} of {spatial.Count} spatial stamp findings at bottom-right");
        var group = demo.Cue.Json["cue_groups"]!.AsArray().Single(g => (string)g!["attribute"]! == "stamp" && (string)g["value"]! == "yes");
        Assert.Equal("bottom-right", (string)group!["region"]!);
    }

    [Fact]
    public void Audit_IndependentAttribute_HasNoLeakage()
    {
        foreach (var audit in new[] { demo.Cue.Json, demo.Control.Json })
        {
            Assert.True(Leakage(audit, "camera") < 0.1, $"camera leakage {Leakage(audit, "camera")}");
            Assert.Equal("pass", (string)Attribute(audit, "camera")["verdict"]!);
            Assert.Equal(0, (int)Attribute(audit, "camera")["findings"]!);
        }
    }

    [Fact]
    public void Audit_ControlModel_Passes()
    {
        Assert.Equal(0, demo.Control.Status);
        Assert.Equal("pass", (string)demo.Control.Json["verdict"]!);
        Assert.True(Leakage(demo.Control.Json, "stamp") < 0.1);
        Assert.True(Leakage(demo.Control.Json, "belt") < 0.1);
    }

    [Fact]
    public void Interventions_CueModel_PastingTheStampMovesAndCoveringItUndoesAgainstAMatchedControl()
    {
        var transplant = CueMeasure(demo.Cue.Json, "stamp=yes", "transplant")!;
        Assert.True((double)transplant["value"]! >= 0.25 && (double)transplant["low"]! > 0, $"pasting the stamp region should move predictions to mouldy beyond the control: {transplant.ToJsonString()}");
        Assert.Contains("control", (string)transplant["detail"]!);
        var occlusion = CueMeasure(demo.Cue.Json, "stamp=yes", "occlusion")!;
        Assert.True((double)occlusion["value"]! >= 0.25 && (double)occlusion["low"]! > 0, $"covering the stamp should change stamp-driven predictions beyond the control: {occlusion.ToJsonString()}");
    }

    [Fact]
    public void Interventions_ControlModel_NothingMovesBeyondTheControl()
    {
        var stamp = Attribute(demo.Control.Json, "stamp")["measures"]!.AsArray().Where(m => (string)m!["name"]! != "accuracy_gap").ToList();
        Assert.All(stamp, m => Assert.True((double)m!["value"]! <= 0.05, $"the control model should barely move: {m!.ToJsonString()}"));
    }

    [Fact]
    public void CueRegions_StampIsLocalAtTheBottomRightAndTheBeltIsGlobal()
    {
        var stamp = Region(demo.Cue.Json, "stamp", "yes");
        Assert.Equal("local", (string)stamp["kind"]!);
        var box = stamp["box"]!;
        // The generator's stamp strip is x 47..62, y 56..62 of the 64×64 input (seed-demo/README.md).
        Assert.InRange((int)box["x"]!, 40, 47);
        Assert.InRange((int)box["y"]!, 50, 56);
        Assert.True((double)stamp["share"]! < 0.1);
        Assert.Equal("global", (string)Region(demo.Cue.Json, "belt", "blue")["kind"]!);
        Assert.Contains(Attribute(demo.Cue.Json, "belt")["measures"]!.AsArray(), m => (string)m!["name"]! == "colour_transfer");
    }

    [Fact]
    public void Audit_SetWithoutAttributeColumns_StillBlocksOnTheOverlay()
    {
        Assert.Equal(1, demo.BareCue.Status);
        var reasons = demo.BareCue.Json["reasons"]!.AsArray().Select(r => (string)r!["attribute"]!).ToList();
        Assert.Contains("place:bottom-right", reasons);
    }

    [Fact]
    public void Audit_NoColumnsAndCuesIndependentOfLabel_CueModelBlocksOnTheOverlayControlPasses()
    {
        Assert.Equal(1, demo.BareIndependentCue.Status);
        var reasons = demo.BareIndependentCue.Json["reasons"]!.AsArray().Select(r => (string)r!["attribute"]!).ToList();
        Assert.Contains("place:bottom-right", reasons);
        Assert.Equal(0, demo.BareIndependentControl.Status);
        Assert.Equal("pass", (string)demo.BareIndependentControl.Json["verdict"]!);
    }

    [Fact]
    public void Audit_BalancedSetWhereCuesAreIndependentOfLabel_StillCatchesBothCues()
    {
        Assert.Equal(1, demo.IndependentCue.Status);
        Assert.Equal("block", (string)Attribute(demo.IndependentCue.Json, "stamp")["verdict"]!);
        Assert.Equal("block", (string)Attribute(demo.IndependentCue.Json, "belt")["verdict"]!);
        Assert.True(Measure(demo.IndependentCue.Json, "belt", "accuracy_gap") > 0.5, "a balanced set must still show the belt's pull");
        Assert.Equal("pass", (string)Attribute(demo.IndependentCue.Json, "camera")["verdict"]!);
        Assert.Equal(0, demo.IndependentControl.Status);
    }

    [Fact]
    public void Audit_AllowedClassDefiningAttribute_NeverBlocks() =>
        Assert.Equal("allowed", (string)Attribute(demo.Cue.Json, "defect_area")["verdict"]!);

    [Fact]
    public void AuditJson_ValidatesAgainstTheCommittedSchema()
    {
        var schema = JsonSchema.FromText(File.ReadAllText(Path.Combine(AppContext.BaseDirectory, "audit.schema.json")));
        foreach (var r in new[] { demo.Cue, demo.Control, demo.BareCue })
        {
            using var doc = System.Text.Json.JsonDocument.Parse(r.Json.ToJsonString());
            var result = schema.Evaluate(doc.RootElement, new EvaluationOptions { OutputFormat = OutputFormat.List });
            Assert.True(result.IsValid, string.Join("\n", (result.Details ?? []).Where(d => d.Errors is { Count: > 0 }).SelectMany(d => d.Errors!.Select(e => $"{d.InstanceLocation}: {e.Key} {e.Value}"))));
        }
    }

    [Fact]
    public void Report_IsWrittenWithExemplarPictures()
    {
        var html = File.ReadAllText(Path.Combine(demo.Cue.Dir, "report.html"));
        Assert.Contains("data:image/png;base64,", html);
        Assert.Contains("cannot prove", html);
    }

    [Fact]
    public void Compare_ControlThenCueModel_ListsTheRiseAndBlocks()
    {
        var policy = Path.Combine(demo.Root, "rise-policy.json");
        File.WriteAllText(policy, """{ "max_leakage_rise": 0.1 }""");
        var (status, stdout, stderr) = CliProcess.Run("compare", Path.Combine(demo.Control.Dir, "audit.json"), Path.Combine(demo.Cue.Dir, "audit.json"), "--policy", policy);
        Assert.True(status == 1, stderr);
        Assert.Contains("verdict: block (before: pass, now: block)", stdout);
        Assert.Contains("stamp: leakage rose by", stdout);
        var (same, _, _) = CliProcess.Run("compare", Path.Combine(demo.Control.Dir, "audit.json"), Path.Combine(demo.Control.Dir, "audit.json"), "--policy", policy);
        Assert.Equal(0, same);
    }
}
