using System.Text.Json.Nodes;
using AuditSvc.Cli.Commands;
using AuditSvc.Cli.Demo;

namespace AuditSvc.Cli.Tests.Audits;

/// <summary>Bad input gets a message naming the file, row or field; bad rows are skipped and reported, never fatal alone.</summary>
public class BadInputTests
{
    private static string Model => DemoCommand.FindModel("fruit-cue.onnx");

    private static string SmallSet(string dir, int count = 60) =>
        DemoSetGenerator.Write(dir, new DemoSetOptions(count, DemoCommand.DemoAgreement, 99));

    [Fact]
    public void Audit_BrokenRows_AreSkippedReportedByRowAndTheAuditStillRuns()
    {
        var dir = CliProcess.TempDir("badrows");
        var manifest = SmallSet(dir);
        var lines = File.ReadAllLines(manifest).ToList();
        File.WriteAllText(Path.Combine(dir, "images", "broken.png"), "this is not a png");
        lines.Add("images/missing.png,sound,no,grey,cam1,0.1");      // row 61: missing file
        lines.Add("images/broken.png,sound,no,grey,cam1,0.1");       // row 62: undecodable
        lines.Add("images/00001.png,mouldy,no,grey,cam1,0.1");       // row 63: duplicate path
        lines.Add("images/00002.png,rotten,no,grey,cam1,0.1");       // row 64: unknown label (also a duplicate, label checked after)
        File.WriteAllLines(manifest, lines);
        var (status, stdout, _) = CliProcess.Run("audit", "--model", Model, "--data", manifest, "--out", Path.Combine(dir, "out"));
        Assert.True(status is 0 or 1, $"status {status}");
        Assert.Contains("4 rows rejected at intake", stdout);
        var json = JsonNode.Parse(File.ReadAllText(Path.Combine(dir, "out", "audit.json")))!;
        var problems = json["image_set"]!["problems"]!.AsArray().ToDictionary(p => (int)p!["row"]!, p => (string)p!["reason"]!);
        Assert.Contains("file not found", problems[61]);
        Assert.Contains("not a decodable image", problems[62]);
        Assert.Contains("duplicate path", problems[63]);
        Assert.Contains("duplicate path", problems[64]);
        Assert.Equal(60, (int)json["image_set"]!["rows_used"]!);
    }

    [Fact]
    public void Audit_UnknownLabel_IsReportedWithTheModelsClasses()
    {
        var dir = CliProcess.TempDir("badlabel");
        var manifest = SmallSet(dir);
        File.AppendAllText(manifest, "images/00003.png,rotten,no,grey,cam1,0.1\n".Replace("00003", "00003"));
        var lines = File.ReadAllLines(manifest);
        lines[^1] = lines[^1].Replace("images/00003.png", "images/extra.png");
        File.Copy(Path.Combine(dir, "images", "00003.png"), Path.Combine(dir, "images", "extra.png"));
        File.WriteAllLines(manifest, lines);
        var (status, _, _) = CliProcess.Run("audit", "--model", Model, "--data", manifest, "--out", Path.Combine(dir, "out"));
        Assert.True(status is 0 or 1);
        var json = JsonNode.Parse(File.ReadAllText(Path.Combine(dir, "out", "audit.json")))!;
        var problem = json["image_set"]!["problems"]!.AsArray().Single();
        Assert.Equal(61, (int)problem!["row"]!);
        Assert.Contains("unknown label 'rotten'", (string)problem["reason"]!);
        Assert.Contains("sound, spotted, mouldy", (string)problem["reason"]!);
    }

    [Fact]
    public void Audit_NoUsableRows_ExitsTwoNamingTheSet()
    {
        var dir = CliProcess.TempDir("norows");
        var manifest = Path.Combine(dir, "manifest.csv");
        File.WriteAllText(manifest, "image,label\nnothere.png,sound\nalso-missing.png,mouldy\n");
        var (status, _, stderr) = CliProcess.Run("audit", "--model", Model, "--data", manifest, "--out", Path.Combine(dir, "out"));
        Assert.Equal(2, status);
        Assert.Contains("no usable rows", stderr);
        Assert.Contains("row 1 nothere.png: file not found", stderr);
    }

    [Fact]
    public void Audit_ManifestWithoutLabelColumn_ExitsTwoNamingTheColumn()
    {
        var dir = CliProcess.TempDir("nolabel");
        var manifest = Path.Combine(dir, "manifest.csv");
        File.WriteAllText(manifest, "image,grade\na.png,sound\n");
        var (status, _, stderr) = CliProcess.Run("audit", "--model", Model, "--data", manifest, "--out", Path.Combine(dir, "out"));
        Assert.Equal(2, status);
        Assert.Contains("'label' column", stderr);
        Assert.Contains(manifest, stderr);
    }

    [Fact]
    public void Audit_ModelThatIsNotOnnx_ExitsTwoNamingTheFile()
    {
        var dir = CliProcess.TempDir("notonnx");
        var model = Path.Combine(dir, "model.onnx");
        File.WriteAllText(model, "definitely not protobuf");
        var manifest = SmallSet(Path.Combine(dir, "set"), 10);
        var (status, _, stderr) = CliProcess.Run("audit", "--model", model, "--data", manifest, "--out", Path.Combine(dir, "out"));
        Assert.Equal(2, status);
        Assert.Contains(model, stderr);
    }

    [Fact]
    public void Audit_MissingDataPath_ExitsTwo()
    {
        var (status, _, stderr) = CliProcess.Run("audit", "--model", Model, "--data", "/no/such/set.csv", "--out", CliProcess.TempDir("nodata"));
        Assert.Equal(2, status);
        Assert.Contains("/no/such/set.csv", stderr);
    }

    [Fact]
    public void Audit_MissingRequiredOption_ExitsTwoWithUsage()
    {
        var (status, _, stderr) = CliProcess.Run("audit", "--data", "x.csv");
        Assert.Equal(2, status);
        Assert.Contains("--model", stderr);
    }

    [Theory]
    [InlineData("""{ "leakage_threshold": 1.5 }""", "leakage_threshold")]
    [InlineData("""{ "fdr_levl": 0.1 }""", "fdr_levl")]
    [InlineData("""{ "allowed_attributes": ["stamp"], "attribute_thresholds": { "stamp": 0.3 } }""", "attribute_thresholds.stamp")]
    [InlineData("""{ "confounded": "ignore" }""", "confounded")]
    public void Audit_BadPolicy_ExitsTwoNamingTheField(string policyJson, string field)
    {
        var dir = CliProcess.TempDir("badpolicy");
        var policy = Path.Combine(dir, "policy.json");
        File.WriteAllText(policy, policyJson);
        var (status, _, stderr) = CliProcess.Run("audit", "--model", Model, "--data", "unused.csv", "--policy", policy, "--out", Path.Combine(dir, "out"));
        Assert.Equal(2, status);
        Assert.Contains(field, stderr);
        Assert.Contains(policy, stderr);
    }

    [Fact]
    public void Audit_PolicyNamingNoColumn_ExitsTwoNamingTheClosest()
    {
        var dir = CliProcess.TempDir("polcol");
        var manifest = SmallSet(dir, 12);
        var policy = Path.Combine(dir, "policy.json");
        File.WriteAllText(policy, """{ "allowed_attributes": ["defect_aera"] }""");
        var (status, _, stderr) = CliProcess.Run("audit", "--model", Model, "--data", manifest, "--policy", policy, "--out", Path.Combine(dir, "out"));
        Assert.Equal(2, status);
        Assert.Contains("'defect_aera'", stderr);
        Assert.Contains("closest: 'defect_area'", stderr);
    }
}
