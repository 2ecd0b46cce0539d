using AuditSvc.Compute.Bench;
using SixLabors.ImageSharp;

namespace AuditSvc.Compute.Tests.Bench;

/// <summary>The bench runs end to end on the demo model and reports consistent figures (no timed assertions).</summary>
public class ThroughputBenchTests
{
    private static readonly string Model = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    [Fact]
    public void Run_DemoModel_ReportsEveryPhaseAndMemoryAtBothSizes()
    {
        var options = new BenchOptions(Model, Images: 6, BatchSize: 4, Threads: 1, PhotoWidth: 120, PhotoHeight: 90,
            MemoryFactor: 3, Rounds: 1, LeakRuns: 2, MinPhaseSeconds: 0);
        var lines = new List<string>();
        var r = ThroughputBench.Run(options, lines.Add, CancellationToken.None);
        Assert.Equal(6, r.Images);
        Assert.Equal(18, r.FactorImages);
        Assert.Equal(4, r.BatchSize);
        Assert.Equal(240, r.Units);
        foreach (var phase in new[] { r.Raw, r.Pass, r.Whole, r.Decode, r.WholeAtFactorN })
            Assert.True(phase.ImagesPerSecond > 0 && double.IsFinite(phase.ImagesPerSecond));
        Assert.True(r.PeakBytesAtN > 0 && r.PeakBytesAtFactorN > 0 && r.PeakBytesAtNAfter > 0);
        Assert.Equal(2, r.ResidentAfterRuns.Count);
        // One round: the ratios are that round's own.
        Assert.Equal(r.Pass.ImagesPerSecond / r.Raw.ImagesPerSecond, r.PassRatio, 9);
        Assert.Equal(1 / (1 / r.Decode.ImagesPerSecond + 1 / r.Raw.ImagesPerSecond), r.SharedBound, 9);
        // 3 class probabilities (float), a prediction (int) and a scored flag (bool).
        Assert.Equal(17, r.ProbabilityBytesPerImage);
        Assert.Contains(lines, l => l.StartsWith("round 1:", StringComparison.Ordinal));
    }

    [Fact]
    public void Write_PhotoSizes_AreJpegAndPngOfThatSize()
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-bench-img-" + Guid.NewGuid().ToString("N"));
        var files = BenchImages.Write(dir, 4, 50, 30);
        Assert.Equal(3, files.Count(f => f.EndsWith(".jpg", StringComparison.Ordinal)));
        Assert.Single(files, f => f.EndsWith(".png", StringComparison.Ordinal));
        foreach (var f in files)
        {
            var info = Image.Identify(f);
            Assert.Equal((50, 30), (info.Width, info.Height));
        }
        Directory.Delete(dir, true);
    }

    [Fact]
    public void ArchitectureOf_KnownFiles_NamesTheRebuild()
    {
        Assert.Equal("resnet18", TorchBaseline.ArchitectureOf("/x/bench-models/resnet18.onnx"));
        Assert.Equal("fruit", TorchBaseline.ArchitectureOf("fruit-cue.onnx"));
        Assert.Null(TorchBaseline.ArchitectureOf("other.onnx"));
    }
}
