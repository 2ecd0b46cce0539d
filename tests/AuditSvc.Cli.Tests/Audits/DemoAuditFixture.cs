using System.Text.Json.Nodes;
using AuditSvc.Cli.Commands;
using AuditSvc.Cli.Demo;

namespace AuditSvc.Cli.Tests.Audits;

/// <summary>
/// One invented demo set and the audits of both demo models over it, run once through the real command line
/// and shared by the end-to-end tests (each test only reads the results).
/// </summary>
public sealed class DemoAuditFixture : IDisposable
{
    public DemoAuditFixture()
    {
        Root = CliProcess.TempDir("demo-e2e");
        Manifest = DemoSetGenerator.Write(Path.Combine(Root, "set"), new DemoSetOptions(2000, DemoCommand.DemoAgreement, 4242));
        Bare = Path.Combine(Root, "set", "bare.csv");
        File.WriteAllLines(Bare, File.ReadAllLines(Manifest).Select(l => string.Join(',', l.Split(',').Take(2))));
        var policy = Path.Combine(Root, "policy.json");
        File.WriteAllText(policy, """{ "allowed_attributes": ["defect_area"] }""");
        Cue = Audit("fruit-cue.onnx", Manifest, "cue", policy);
        Control = Audit("fruit-control.onnx", Manifest, "control", policy);
        BareCue = Audit("fruit-cue.onnx", Bare, "bare", policy);
        // Cues independent of the label, no attribute columns: the overlay must still be found by its place.
        var independent = DemoSetGenerator.Write(Path.Combine(Root, "independent"), new DemoSetOptions(1200, DemoSetOptions.IndependentAgreement, 777));
        var bareIndependent = Path.Combine(Root, "independent", "bare.csv");
        File.WriteAllLines(bareIndependent, File.ReadAllLines(independent).Select(l => string.Join(',', l.Split(',').Take(2))));
        BareIndependentCue = Audit("fruit-cue.onnx", bareIndependent, "bare-independent-cue", policy);
        BareIndependentControl = Audit("fruit-control.onnx", bareIndependent, "bare-independent-control", policy);
        IndependentCue = Audit("fruit-cue.onnx", independent, "independent-cue", policy);
        IndependentControl = Audit("fruit-control.onnx", independent, "independent-control", policy);
    }

    public Result IndependentCue { get; }

    public Result IndependentControl { get; }

    public Result BareIndependentCue { get; }

    public Result BareIndependentControl { get; }

    public string Root { get; }

    public string Manifest { get; }

    public string Bare { get; }

    public Result Cue { get; }

    public Result Control { get; }

    public Result BareCue { get; }

    public sealed record Result(int Status, string Out, string Err, string Dir, JsonNode Json);

    private Result Audit(string model, string data, string name, string policy)
    {
        var dir = Path.Combine(Root, name);
        var (status, stdout, stderr) = CliProcess.Run("audit", "--model", DemoCommand.FindModel(model), "--data", data, "--out", dir, "--policy", policy);
        var jsonPath = Path.Combine(dir, "audit.json");
        Assert.True(File.Exists(jsonPath), $"audit {name} wrote no audit.json (status {status}): {stderr}");
        return new Result(status, stdout, stderr, dir, JsonNode.Parse(File.ReadAllText(jsonPath))!);
    }

    public void Dispose()
    {
        try { Directory.Delete(Root, recursive: true); } catch (IOException) { }
    }
}

[CollectionDefinition(nameof(DemoAudits))]
public sealed class DemoAudits : ICollectionFixture<DemoAuditFixture>;
