using System.Text.Json.Nodes;
using AuditSvc.Cli.Scenarios;

namespace AuditSvc.Cli.Tests.Scenarios;

/// <summary>
/// The CI-sized part of the validation suite (docs/validation.md has the whole table): committed models of the
/// invented tile scenarios, each audited through the real command line on a set where its cue is linked to the label.
/// A model whose counterfactual twins show no reliance must pass; one whose twins show a reliance gap of 0.3 or more
/// must block, with attribute columns and, for a fixed-place stamp, without them. True reliance is read from
/// seed-demo/scenarios/reliance.json (measured by train_scenarios.py on held-out twins), not assumed from training.
/// </summary>
public sealed class ScenarioValidationTests
{
    private static readonly string Repo = FindRepo();

    private static string FindRepo()
    {
        for (var d = new DirectoryInfo(AppContext.BaseDirectory); d is not null; d = d.Parent)
            if (File.Exists(Path.Combine(d.FullName, "AuditSvc.sln"))) return d.FullName;
        throw new InvalidOperationException("repository root (AuditSvc.sln) not found above the test binaries");
    }

    private static double Reliance(string model)
    {
        var json = JsonNode.Parse(File.ReadAllText(Path.Combine(Repo, "seed-demo", "scenarios", "reliance.json")))!;
        return (double)json[model]!["reliance"]!;
    }

    private static (int Status, JsonNode Audit) Audit(string model, string scenario, double agreement, bool bare)
    {
        var root = CliProcess.TempDir("scenario");
        try
        {
            var s = ScenarioCatalogue.Find(scenario)!;
            var manifest = ScenarioSetGenerator.Write(Path.Combine(root, "set"), new ScenarioSetOptions(s, 900, agreement, 5101, Bare: bare));
            var path = Path.Combine(Repo, "seed-demo", "scenarios", "models", model + ".onnx");
            var (status, _, stderr) = CliProcess.Run("audit", "--model", path, "--data", manifest, "--out", Path.Combine(root, "out"));
            Assert.True(status is 0 or 1, $"{model}: exit {status}: {stderr}");
            return (status, JsonNode.Parse(File.ReadAllText(Path.Combine(root, "out", "audit.json")))!);
        }
        finally
        {
            try { Directory.Delete(root, recursive: true); } catch (IOException) { }
        }
    }

    [Theory]
    [InlineData("stamp-top-left", false)]
    [InlineData("stamp-top-left", true)]
    [InlineData("border-thin-red", false)]
    public void Audit_ModelThatIgnoresItsCue_Passes(string scenario, bool bare)
    {
        string model = scenario + "-ignores";
        Assert.True(Reliance(model) < 0.1, $"{model} was meant to ignore its cue; its twins say {Reliance(model)}");
        var (status, audit) = Audit(model, scenario, 0.75, bare);
        Assert.True(status == 0, $"{model} (bare: {bare}) was blocked: {audit["reasons"]!.ToJsonString()}");
    }

    [Theory]
    [InlineData("stamp-top-left", false)]
    [InlineData("stamp-top-left", true)]
    [InlineData("border-thin-red", false)]
    public void Audit_ModelThatReliesOnItsCue_Blocks(string scenario, bool bare)
    {
        string model = scenario + "-relies";
        Assert.True(Reliance(model) >= 0.3, $"{model} was meant to rely on its cue; its twins say {Reliance(model)}");
        var (status, audit) = Audit(model, scenario, 0.75, bare);
        Assert.True(status == 1, $"{model} (bare: {bare}) passed: {audit["attributes"]!.ToJsonString()[..Math.Min(2000, audit["attributes"]!.ToJsonString().Length)]}");
    }
}
