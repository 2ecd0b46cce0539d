using System.Text.Json;

namespace AuditSvc.Cli.Tests.Commands;

/// <summary>The bench command through the CLI entry point: figures as text, one JSON object last, bad options exit 2.</summary>
public class BenchCommandTests
{
    private static readonly string Demo = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    [Fact]
    public void Bench_DemoModelWithJson_EndsWithOneJsonObjectHoldingTheRatios()
    {
        var (status, stdout, stderr) = CliProcess.Run("bench", "--model", Demo, "--images", "4", "--batch", "2", "--threads", "1",
            "--size", "80x60", "--memory-factor", "2", "--rounds", "1", "--min-seconds", "0", "--json");
        Assert.True(status == 0, stderr);
        var last = stdout.Split('\n', StringSplitOptions.RemoveEmptyEntries)[^1];
        using var doc = JsonDocument.Parse(last);
        var root = doc.RootElement;
        Assert.True(root.GetProperty("pass_ratio").GetDouble() > 0);
        Assert.True(root.GetProperty("whole_ratio").GetDouble() > 0);
        Assert.Equal(8, root.GetProperty("factor_images").GetInt32());
        Assert.Equal("80x60", root.GetProperty("photo_size").GetString());
        Assert.Contains("pass/raw", stdout, StringComparison.Ordinal);
    }

    [Fact]
    public void Bench_ZeroImages_ExitsTwoNamingTheOption()
    {
        var (status, _, stderr) = CliProcess.Run("bench", "--model", Demo, "--images", "0");
        Assert.Equal(2, status);
        Assert.Contains("--images", stderr, StringComparison.Ordinal);
    }

    [Fact]
    public void Bench_MissingModel_ExitsTwoNamingTheFile()
    {
        var (status, _, stderr) = CliProcess.Run("bench", "--model", "/nonexistent/model.onnx", "--images", "2");
        Assert.Equal(2, status);
        Assert.Contains("/nonexistent/model.onnx", stderr, StringComparison.Ordinal);
    }

    [Fact]
    public void Bench_AuditSizes_PrintsOneWholeAuditPerSizeAgainstTheScript()
    {
        var script = Path.Combine(Path.GetTempPath(), "auditsvc-no-script-" + Guid.NewGuid().ToString("N") + ".py");
        var (status, stdout, stderr) = CliProcess.Run("bench", "--model", Demo, "--audit-sizes", "24,36", "--batch", "4", "--threads", "1",
            "--size", "80x60", "--torch", script, "--json");
        Assert.True(status == 0, stderr);
        var last = stdout.Split('\n', StringSplitOptions.RemoveEmptyEntries)[^1];
        using var doc = JsonDocument.Parse(last);
        var audits = doc.RootElement.GetProperty("audits");
        Assert.Equal([24, 36], audits.EnumerateArray().Select(a => a.GetProperty("images").GetInt32()));
        foreach (var a in audits.EnumerateArray())
        {
            Assert.True(a.GetProperty("audit_seconds").GetDouble() > 0);
            Assert.True(a.GetProperty("pass_seconds").GetDouble() > 0);
            Assert.Equal(a.GetProperty("images").GetInt32(), a.GetProperty("scored").GetInt32());
            // The same audit again by `auditsvc audit` in a process of its own, timed start to exit.
            Assert.True(a.GetProperty("audit_process_seconds").GetDouble() > 0);
            // The script does not exist here: the audit is still measured, and the row says the script did not run.
            Assert.Equal(JsonValueKind.Null, a.GetProperty("audit_vs_script").ValueKind);
        }
        Assert.Contains("eager script not run", stdout, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("0")]
    [InlineData("400,x")]
    [InlineData("50001")]
    [InlineData("1,2,3,4,5,6,7")]
    public void Bench_BadAuditSizes_ExitTwoNamingTheOption(string sizes)
    {
        var (status, _, stderr) = CliProcess.Run("bench", "--model", Demo, "--audit-sizes", sizes);
        Assert.Equal(2, status);
        Assert.Contains("--audit-sizes", stderr, StringComparison.Ordinal);
    }
}
