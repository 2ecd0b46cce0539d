using System.Text.Json.Nodes;
using AuditSvc.Cli.Demo;
using Json.Schema;

namespace AuditSvc.Cli.Tests.Audits;

/// <summary>One small invented demo set (36 images), written once for the model-family audits.</summary>
public sealed class SmallDemoSet
{
    public SmallDemoSet()
    {
        Dir = CliProcess.TempDir("families");
        Manifest = DemoSetGenerator.Write(Dir, new DemoSetOptions(36, 0.6, 5));
        // Two classes for the binary model: the demo's "mouldy" rows left out.
        Binary = Path.Combine(Dir, "binary.csv");
        File.WriteAllLines(Binary, File.ReadAllLines(Manifest).Where(l => !l.Contains(",mouldy,", StringComparison.Ordinal)));
    }

    public string Dir { get; }

    public string Manifest { get; }

    public string Binary { get; }
}

/// <summary>
/// Every random-weight fixture of tests/models audits end to end through the command line (exit 0 or 1, never 2
/// or 3), reads the layers intake chose, writes audit.json (valid against the committed schema) and report.html,
/// and boxes every exemplar inside the input.
/// </summary>
public class ModelFamiliesAuditTests(SmallDemoSet set) : IClassFixture<SmallDemoSet>
{
    private const string Labels = "sound,spotted,mouldy";

    // The schema library registers a schema by its id once per registry; a private one keeps other tests' free.
    private static readonly Lazy<JsonSchema> Schema = new(() =>
        JsonSchema.FromText(File.ReadAllText(Path.Combine(AppContext.BaseDirectory, "audit.schema.json")), new BuildOptions { SchemaRegistry = new() }));

    [Theory]
    [InlineData("resnet", "channels-first", 4)]
    [InlineData("resnet-dynamic-size", "channels-first", 4)]
    [InlineData("densenet", "channels-first", 2)]
    [InlineData("mobilenetv3-normalised", "channels-first", 4)]
    [InlineData("efficientnet", "channels-first", 3)]
    [InlineData("inception", "channels-first", 3)]
    [InlineData("vgg-fixed-batch", "channels-first", 4)]
    [InlineData("convnext", "channels-first", 2)]
    [InlineData("vit", "tokens", 6)]
    [InlineData("channels-last-input", "channels-first", 4)]
    [InlineData("binary-sigmoid", "channels-first", 4)]
    [InlineData("classes-120", "channels-first", 4)]
    public void Audit_ModelFamily_CompletesAndReadsItsLayers(string name, string layout, int layersOfLayout)
    {
        var out_ = Path.Combine(set.Dir, "out-" + name);
        var args = new List<string> { "audit", "--model", Path.Combine(AppContext.BaseDirectory, "model-fixtures", name + ".onnx"), "--out", out_ };
        args.AddRange(name switch
        {
            "binary-sigmoid" => ["--data", set.Binary, "--labels", "sound,spotted"],
            "classes-120" => ["--data", set.Manifest, "--labels", Labels + "," + string.Join(",", Enumerable.Range(4, 117).Select(i => $"other{i}"))],
            "resnet-dynamic-size" => ["--data", set.Manifest, "--labels", Labels, "--size", "64"],
            _ => ["--data", set.Manifest, "--labels", Labels],
        });
        var (status, _, stderr) = CliProcess.Run([.. args]);
        Assert.True(status is 0 or 1, $"{name}: status {status}: {stderr}");
        Assert.True(File.Exists(Path.Combine(out_, "report.html")));
        var text = File.ReadAllText(Path.Combine(out_, "audit.json"));
        var json = JsonNode.Parse(text)!;

        var layers = json["model"]!["layers"]!.AsArray();
        Assert.Equal(layersOfLayout, layers.Count(l => (string)l!["layout"]! == layout));
        Assert.Contains(layers, l => (string)l!["layout"]! == "vector");
        Assert.Equal(36 - (name == "binary-sigmoid" ? CountMouldy() : 0), (int)json["pass"]!["scored"]!);

        foreach (var box in json["findings"]!.AsArray().SelectMany(f => f!["exemplars"]!.AsArray()).Select(e => e!["box"]!))
        {
            Assert.InRange((int)box["x"]!, 0, 63);
            Assert.InRange((int)box["y"]!, 0, 63);
            Assert.InRange((int)box["x"]! + (int)box["width"]!, 1, 64);
            Assert.InRange((int)box["y"]! + (int)box["height"]!, 1, 64);
        }

        using var doc = System.Text.Json.JsonDocument.Parse(text);
        Assert.True(Schema.Value.Evaluate(doc.RootElement).IsValid, "audit.json does not validate against the committed schema");
    }

    [Fact]
    public void Audit_VisionTransformer_ReportSaysAttentionSeesTheWholeImage()
    {
        var out_ = Path.Combine(set.Dir, "out-vit-report");
        var (status, _, stderr) = CliProcess.Run("audit", "--model", Path.Combine(AppContext.BaseDirectory, "model-fixtures", "vit.onnx"),
            "--data", set.Manifest, "--labels", Labels, "--out", out_);
        Assert.True(status is 0 or 1, stderr);
        var html = File.ReadAllText(Path.Combine(out_, "report.html"));
        Assert.Contains("attention makes its true receptive field the whole image", html);
    }

    [Fact]
    public void Audit_NormalisationInsideGraph_ReportAndJsonSayTheRecipeDoesNotRepeatIt()
    {
        var out_ = Path.Combine(set.Dir, "out-normalised");
        var (status, _, stderr) = CliProcess.Run("audit", "--model", Path.Combine(AppContext.BaseDirectory, "model-fixtures", "mobilenetv3-normalised.onnx"),
            "--data", set.Manifest, "--labels", Labels, "--out", out_);
        Assert.True(status is 0 or 1, stderr);
        var model = JsonNode.Parse(File.ReadAllText(Path.Combine(out_, "audit.json")))!["model"]!;
        Assert.Equal([0.0, 0.0, 0.0], model["mean"]!.AsArray().Select(v => (double)v!));
        Assert.Contains(model["notes"]!.AsArray(), n => ((string)n!).Contains("nothing is normalised twice", StringComparison.Ordinal));
        Assert.Contains("nothing is normalised twice", File.ReadAllText(Path.Combine(out_, "report.html")));
    }

    private int CountMouldy() => File.ReadAllLines(set.Manifest).Count(l => l.Contains(",mouldy,", StringComparison.Ordinal));
}
