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
}
