using AuditSvc.Compute.Activations;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Models;
using AuditSvc.Core.Activations;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.Activations;

/// <summary>
/// The fast paths of the pass (maxima inside the graph, the parallel reduce, pre-filled tensors, spilling the
/// scores matrix) against the plain ones: the same scores, peaks, exemplars and predictions, bit for bit.
/// </summary>
public class FastPathTests
{
    private static readonly string Model = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    private static ItemTable PhotoSet(int count)
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-fast-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(dir);
        var rng = new Random(11);
        var lines = new List<string> { "image,label" };
        for (int i = 0; i < count; i++)
        {
            // Blocks of colour rather than pure noise, so ReLU maps have distinct peaks and flat zero regions (ties).
            using var img = new Image<Rgb24>(96, 72);
            var c = new Rgb24((byte)rng.Next(256), (byte)rng.Next(256), (byte)rng.Next(256));
            int bx = rng.Next(60), by = rng.Next(40);
            for (int y = 0; y < 72; y++)
                for (int x = 0; x < 96; x++)
                    img[x, y] = x >= bx && x < bx + 30 && y >= by && y < by + 25 ? c : new Rgb24((byte)(x * 2), (byte)(y * 3), (byte)rng.Next(40));
            img.SaveAsPng(Path.Combine(dir, $"{i}.png"));
            lines.Add($"{i}.png,{(i % 2 == 0 ? "sound" : "mouldy")}");
        }
        File.WriteAllLines(Path.Combine(dir, "manifest.csv"), lines);
        return SetIntake.Read(dir, ["sound", "spotted", "mouldy"], dir);
    }

    private sealed record Snapshot(float[] Scores, Peak[][] Top, int[] Predicted, float[] Probabilities);

    private static Snapshot Take(ActivationResult act, int items)
    {
        var scores = new float[act.UnitCount * items];
        act.Scores.ReadUnits(0, act.UnitCount, scores);
        return new Snapshot(scores, Enumerable.Range(0, act.UnitCount).Select(act.Top.Sorted).ToArray(), act.Predicted, act.Probabilities);
    }

    private static Snapshot RunFiles(LoadedModel model, ItemTable table, PassOptions options)
    {
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, options);
        return Take(pass.Run(table, null, CancellationToken.None), table.Items.Count);
    }

    private static void AssertSame(Snapshot expected, Snapshot actual)
    {
        Assert.Equal(expected.Predicted, actual.Predicted);
        Assert.Equal(expected.Scores, actual.Scores);
        Assert.Equal(expected.Probabilities, actual.Probabilities);
        for (int u = 0; u < expected.Top.Length; u++) Assert.Equal(expected.Top[u], actual.Top[u]);
    }

    [Fact]
    public void Run_MaximaInGraph_EqualMaximaOverFullMaps()
    {
        var table = PhotoSet(20);
        var model = ModelIntake.Load(Model);
        var plain = RunFiles(model, table, new PassOptions { BatchSize = 4, InferenceThreads = 1, DecodeThreads = 1, ReduceInGraph = false, TopN = 5 });
        var inGraph = RunFiles(model, table, new PassOptions { BatchSize = 4, InferenceThreads = 1, DecodeThreads = 1, ReduceInGraph = true, TopN = 5 });
        AssertSame(plain, inGraph);
    }

    [Fact]
    public void Run_ParallelReduceOverMaps_EqualsSerialReduce()
    {
        var table = PhotoSet(12);
        var model = ModelIntake.Load(Model);
        // InferenceThreads > 1 switches the reduce over full maps to its parallel variant.
        var serial = RunFiles(model, table, new PassOptions { BatchSize = 6, InferenceThreads = 1, ReduceInGraph = false, TopN = 5 });
        var parallel = RunFiles(model, table, new PassOptions { BatchSize = 6, InferenceThreads = 2, ReduceInGraph = false, TopN = 5 });
        Assert.Equal(serial.Predicted, parallel.Predicted);
        // Different intra-op thread counts may change ORT's last float bits, not the stored half-precision scores much.
        for (int i = 0; i < serial.Scores.Length; i++)
            Assert.True(Math.Abs(serial.Scores[i] - parallel.Scores[i]) <= 1e-3f * Math.Max(1, Math.Abs(serial.Scores[i])), $"score {i}");
    }

    [Fact]
    public void Run_MaximaInGraphWithSingleRuns_EqualBatchedRuns()
    {
        var table = PhotoSet(9);
        var model = ModelIntake.Load(Model);
        var batched = RunFiles(model, table, new PassOptions { BatchSize = 3, InferenceThreads = 1, TopN = 5 });
        var single = RunFiles(model with { Plan = model.Plan with { Batch = BatchMode.ConcurrentSingle } }, table, new PassOptions { BatchSize = 3, TopN = 5 });
        Assert.Equal(batched.Predicted, single.Predicted);
        for (int i = 0; i < batched.Scores.Length; i++)
            Assert.True(Math.Abs(batched.Scores[i] - single.Scores[i]) <= 1e-3f * Math.Max(1, Math.Abs(batched.Scores[i])), $"score {i}");
    }

    [Fact]
    public void RunTensors_PreDecodedImages_EqualRunOnFiles()
    {
        var table = PhotoSet(10);
        var model = ModelIntake.Load(Model);
        var options = new PassOptions { BatchSize = 4, InferenceThreads = 1, DecodeThreads = 1, TopN = 5 };
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, options);
        int slot = pass.Preprocessor.SlotLength;
        var tensors = new float[table.Items.Count * slot];
        for (int i = 0; i < table.Items.Count; i++)
        {
            using var image = pass.Preprocessor.Load(table.Items[i].Path);
            pass.Preprocessor.Write(image, tensors.AsSpan(i * slot, slot));
        }
        var fromTensors = Take(pass.RunTensors(tensors, table.Items.Count, null, CancellationToken.None), table.Items.Count);
        var fromFiles = Take(pass.Run(table, null, CancellationToken.None), table.Items.Count);
        AssertSame(fromFiles, fromTensors);
    }

    [Fact]
    public void RunTensors_TooFewFloats_Throws()
    {
        var model = ModelIntake.Load(Model);
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, new PassOptions { BatchSize = 2 });
        Assert.Throws<ArgumentException>(() => pass.RunTensors(new float[pass.Preprocessor.SlotLength], 2, null, CancellationToken.None));
    }

    [Fact]
    public void Run_ScoresPastMemoryLimit_SpillToDiskWithSameResults()
    {
        var table = PhotoSet(10);
        var model = ModelIntake.Load(Model);
        var spill = Path.Combine(Path.GetTempPath(), "auditsvc-spill-" + Guid.NewGuid().ToString("N"));
        var inMemory = RunFiles(model, table, new PassOptions { BatchSize = 2, InferenceThreads = 1, TopN = 5 });
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel,
            new PassOptions { BatchSize = 2, InferenceThreads = 1, TopN = 5, ScoreMemoryLimitBytes = 1, SpillDirectory = spill });
        var act = pass.Run(table, null, CancellationToken.None);
        Assert.True(((ScoreStore)act.Scores).Spilled);
        AssertSame(inMemory, Take(act, table.Items.Count));
    }

    [Fact]
    public void Resolve_DefaultOptions_ChooseBatchBySlotSpinningOffMaximaInGraph()
    {
        // 224×224×3 floats: 8 MB of input per run is 13.9 images, rounded down to a power of two.
        var big = new PassOptions().Resolve(3 * 224 * 224, cores: 2);
        Assert.Equal(8, big.BatchSize);
        Assert.Equal(2, big.InferenceThreads);
        Assert.Equal(2, big.DecodeThreads);
        Assert.False(big.Spinning);
        Assert.True(big.ReduceInGraph);
        Assert.Equal(64, new PassOptions().Resolve(3 * 64 * 64, cores: 2).BatchSize);
        Assert.Equal(5, new PassOptions { BatchSize = 5, Spinning = true }.Resolve(12, 2).BatchSize);
    }
}
