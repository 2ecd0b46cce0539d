using AuditSvc.Compute.Activations;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Models;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.Activations;

/// <summary>Speed settings never change results: batch size, threads and batch mode give the same scores and exemplars.</summary>
public class ActivationPassTests
{
    private static readonly string Model = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    private static ItemTable RandomSet(int count, out string dir)
    {
        dir = Path.Combine(Path.GetTempPath(), "auditsvc-pass-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(dir);
        var rng = new Random(5);
        var lines = new List<string> { "image,label" };
        string[] labels = ["sound", "spotted", "mouldy"];
        for (int i = 0; i < count; i++)
        {
            // Mixed sizes so the resize path runs too.
            int w = i % 3 == 0 ? 80 : 64, h = i % 4 == 0 ? 50 : 64;
            using var img = new Image<Rgb24>(w, h);
            for (int y = 0; y < h; y++)
                for (int x = 0; x < w; x++) img[x, y] = new Rgb24((byte)rng.Next(256), (byte)rng.Next(256), (byte)rng.Next(256));
            img.SaveAsPng(Path.Combine(dir, $"{i}.png"));
            lines.Add($"{i}.png,{labels[i % 3]}");
        }
        File.WriteAllLines(Path.Combine(dir, "manifest.csv"), lines);
        return SetIntake.Read(dir, labels, dir);
    }

    private static (float[] Scores, Core.Activations.Peak[][] Top, int[] Pred) RunPass(ItemTable table, LoadedModel model, PassOptions options)
    {
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, options);
        var act = pass.Run(table, null, CancellationToken.None);
        var scores = new float[act.UnitCount * table.Items.Count];
        act.Scores.ReadUnits(0, act.UnitCount, scores);
        return (scores, Enumerable.Range(0, act.UnitCount).Select(act.Top.Sorted).ToArray(), act.Predicted);
    }

    [Fact]
    public void Run_BatchSizesThreadsAndSingleMode_GiveTheSameResults()
    {
        var table = RandomSet(45, out _);
        var model = ModelIntake.Load(Model);
        var reference = RunPass(table, model, new PassOptions { BatchSize = 1, InferenceThreads = 1, DecodeThreads = 1, TopN = 7 });
        var variants = new[]
        {
            (model, new PassOptions { BatchSize = 16, TopN = 7 }),
            (model, new PassOptions { BatchSize = 64, InferenceThreads = 2, DecodeThreads = 2, TopN = 7 }),
            (model with { Plan = model.Plan with { Batch = BatchMode.ConcurrentSingle } }, new PassOptions { BatchSize = 8, TopN = 7 }),
        };
        foreach (var (m, options) in variants)
        {
            var other = RunPass(table, m, options);
            Assert.Equal(reference.Pred, other.Pred);
            // Half-precision storage: equal to the stored precision; ORT's batched kernels may differ in the last float bits.
            for (int i = 0; i < reference.Scores.Length; i++)
                Assert.True(Math.Abs(reference.Scores[i] - other.Scores[i]) <= 1e-3f * Math.Max(1, Math.Abs(reference.Scores[i])), $"score {i}: {reference.Scores[i]} vs {other.Scores[i]}");
            for (int u = 0; u < reference.Top.Length; u++)
                Assert.Equal(reference.Top[u].Select(p => (p.Y, p.X)).Take(3), other.Top[u].Select(p => (p.Y, p.X)).Take(3));
        }
    }

    [Fact]
    public void Run_UndecodableFileAtPassTime_IsReportedAndSkipped()
    {
        var table = RandomSet(10, out var dir);
        File.WriteAllText(Path.Combine(dir, "3.png"), "garbage after intake");
        var model = ModelIntake.Load(Model);
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, new PassOptions { BatchSize = 4 });
        var act = pass.Run(table, null, CancellationToken.None);
        Assert.False(act.Scored[3]);
        Assert.Equal(9, act.Scored.Count(s => s));
        var problem = Assert.Single(act.Problems);
        Assert.Equal("3.png", problem.File);
        Assert.Equal(-1, act.Predicted[3]);
    }

    [Fact]
    public void Run_KeepsFittedImagesOnlyWhenAllFit_AndEditsReadTheSamePixelsAsADecode()
    {
        var table = RandomSet(12, out var dir);
        File.WriteAllText(Path.Combine(dir, "5.png"), "garbage after intake");
        var model = ModelIntake.Load(Model);
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, new PassOptions { BatchSize = 4, DecodeThreads = 2 });
        long each = model.Plan.Recipe.Width * model.Plan.Recipe.Height * 3;

        // One byte short of the whole set: nothing is kept (all or nothing, so a large set pays no memory for it).
        pass.Run(table, null, CancellationToken.None, keepFittedBytes: 12 * each - 1);
        Assert.All(Enumerable.Range(0, 12), i => Assert.Null(pass.Kept(i)));

        pass.Run(table, null, CancellationToken.None, keepFittedBytes: 12 * each);
        Assert.Null(pass.Kept(5));
        Assert.Null(pass.Kept(12));
        using var runs = new AuditSvc.Compute.Audits.ImageRuns(pass);
        foreach (var item in table.Items.Where(i => i.Index != 5))
        {
            var kept = pass.Kept(item.Index);
            Assert.NotNull(kept);
            // The interventions' reader hands out the kept image itself, and it holds what a fresh decode gives.
            Assert.Same(kept, runs.Fitted(item.Path, item.Index));
            using var fresh = pass.Preprocessor.Load(item.Path);
            var a = new Rgb24[each / 3];
            var b = new Rgb24[each / 3];
            kept!.CopyPixelDataTo(a);
            fresh.CopyPixelDataTo(b);
            Assert.Equal(b, a);
        }
        Assert.Null(runs.Fitted(table.Items[5].Path, 5));
        pass.ReleaseKept();
        Assert.Null(pass.Kept(0));
    }

    [Fact]
    public void New_ReadingLayersAndOptions_BuildsNoSession()
    {
        // A merge of chunk results reads only these: it must not pay for a session it never runs.
        var model = ModelIntake.Load(Model);
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, new PassOptions { BatchSize = 4 });
        Assert.NotEmpty(pass.Layers);
        Assert.Equal(4, pass.Options.BatchSize);
        Assert.Equal(model.Plan.Recipe.Mean.Length * 64 * 64, pass.Preprocessor.SlotLength);
        Assert.Equal((false, false), pass.SessionsBuilt);
    }

    [Fact]
    public void Runner_FullMapsForInterventions_LeavesThePassSessionUnbuilt()
    {
        var model = ModelIntake.Load(Model);
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, new PassOptions { BatchSize = 4 });
        Assert.False(pass.Runner.Reduced);
        Assert.Equal((false, true), pass.SessionsBuilt);
        pass.Prepare();
        Assert.Equal((true, true), pass.SessionsBuilt);
    }

    [Fact]
    public void Prepare_ReleasingTheModelBytes_LetsThemGo_RunsTheSame_AndRefusesFullMaps()
    {
        var table = RandomSet(9, out _);
        var (pass, bytes) = PassOverItsOwnBytes(new PassOptions { BatchSize = 4 });
        using (pass)
        {
            pass.Prepare(releaseModelBytes: true);
            GC.Collect();
            GC.WaitForPendingFinalizers();
            Assert.False(bytes.IsAlive, "nothing but the pass held the model's bytes, and it let them go once its session was built");
            var released = pass.Run(table, null, CancellationToken.None);
            var reference = RunPass(table, ModelIntake.Load(Model), new PassOptions { BatchSize = 4 });
            Assert.Equal(reference.Pred, released.Predicted);
            var ex = Assert.Throws<InvalidOperationException>(() => pass.Runner);
            Assert.Contains("full maps", ex.Message, StringComparison.Ordinal);
        }
    }

    [Fact]
    public async Task Run_WhileItsSessionBuilds_DecodesFromTheBack_AndGivesWhatAPlainRunGives()
    {
        var table = RandomSet(30, out var dir);
        // One broken image where the forward decoders start and one where the early decoder does.
        File.WriteAllText(Path.Combine(dir, "2.png"), "garbage after intake");
        File.WriteAllText(Path.Combine(dir, "27.png"), "garbage after intake");
        var model = ModelIntake.Load(Model);
        var options = new PassOptions { BatchSize = 4, DecodeThreads = 2, TopN = 7 };
        long keep = 30L * model.Plan.Recipe.Width * model.Plan.Recipe.Height * 3;

        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, options);
        // The build waits until the early decoder has stopped: it then met the images the forward decoders took.
        pass.BeforeSessionBuild = () => Assert.True(SpinWait.SpinUntil(() => pass.Early.Stopped, TimeSpan.FromSeconds(60)));
        var building = pass.PrepareInBackground();
        var early = pass.Run(table, null, CancellationToken.None, keepFittedBytes: keep);
        await building;
        Assert.InRange(pass.Early.Decoded, 30 - 2 * pass.Options.DecodeAheadImages, 30);
        Assert.True(pass.Early.Decoded >= 20, $"the early decoder took {pass.Early.Decoded} images");

        using var plain = new ActivationPass(model.Plan, model.RewrittenModel, options);
        plain.Prepare();
        var reference = plain.Run(table, null, CancellationToken.None, keepFittedBytes: keep);
        Assert.Equal(0, plain.Early.Decoded);

        Assert.Equal(reference.Predicted, early.Predicted);
        Assert.Equal(reference.Scored, early.Scored);
        Assert.Equal(reference.Problems.Select(p => (p.File, p.Reason)), early.Problems.Select(p => (p.File, p.Reason)));
        Assert.Equal(["2.png", "27.png"], early.Problems.Select(p => p.File).Order());
        var a = new float[early.UnitCount * 30];
        var b = new float[early.UnitCount * 30];
        early.Scores.ReadUnits(0, early.UnitCount, a);
        reference.Scores.ReadUnits(0, reference.UnitCount, b);
        Assert.Equal(b, a);
        for (int u = 0; u < early.UnitCount; u++)
            Assert.Equal(reference.Top.Sorted(u).Select(p => (p.Item, p.Y, p.X)), early.Top.Sorted(u).Select(p => (p.Item, p.Y, p.X)));
        // Kept images are the same whoever decoded them.
        foreach (var item in table.Items.Where(i => i.Index is not 2 and not 27))
        {
            var x = new Rgb24[model.Plan.Recipe.Width * model.Plan.Recipe.Height];
            var y = new Rgb24[x.Length];
            pass.Kept(item.Index)!.CopyPixelDataTo(x);
            plain.Kept(item.Index)!.CopyPixelDataTo(y);
            Assert.Equal(y, x);
        }
    }

    [Theory]
    [InlineData(false, BatchMode.Batched)]
    [InlineData(true, BatchMode.ConcurrentSingle)]
    public void Run_BatchLeftUncheckedByTheIntake_IsSettledOnThePassSession_AndScoresAsTheIntakeChecked(bool fixedReshape, BatchMode settled)
    {
        var table = RandomSet(11, out _);
        using var dir = new Models.TempDir();
        string path = Models.TestModels.SmallCnn(batch: 1, fixedReshape: fixedReshape).Save(dir.Path, "cnn.onnx");
        var deferred = ModelIntake.Load(path, new ModelLoadOptions(BatchCheckOnPass: true));
        Assert.True(deferred.Plan.BatchUnchecked);
        Assert.Equal(BatchMode.Batched, deferred.Plan.Batch);
        var options = new PassOptions { BatchSize = 4, TopN = 5 };

        using var pass = new ActivationPass(deferred.Plan, deferred.RewrittenModel, options);
        Assert.True(pass.Plan.BatchUnchecked);
        pass.Prepare();
        Assert.False(pass.Plan.BatchUnchecked);
        Assert.Equal(settled, pass.Plan.Batch);
        var act = pass.Run(table, null, CancellationToken.None);

        var reference = RunPass(table, ModelIntake.Load(path), options);
        Assert.Equal(reference.Pred, act.Predicted);
        var scores = new float[act.UnitCount * table.Items.Count];
        act.Scores.ReadUnits(0, act.UnitCount, scores);
        for (int i = 0; i < scores.Length; i++)
            Assert.True(Math.Abs(reference.Scores[i] - scores[i]) <= 1e-3f * Math.Max(1, Math.Abs(reference.Scores[i])), $"score {i}: {reference.Scores[i]} vs {scores[i]}");
    }

    // Its own frame: the caller keeps no reference to the model's bytes, only a weak one.
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.NoInlining)]
    private static (ActivationPass Pass, WeakReference Bytes) PassOverItsOwnBytes(PassOptions options)
    {
        var model = ModelIntake.Load(Model);
        return (new ActivationPass(model.Plan, model.RewrittenModel, options), new WeakReference(model.RewrittenModel));
    }
}
