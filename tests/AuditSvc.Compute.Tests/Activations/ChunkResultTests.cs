using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Models;
using AuditSvc.Core.Gate;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.Activations;

/// <summary>A distributed audit (chunks run apart, written, read back and merged) equals the one-process audit.</summary>
public class ChunkResultTests
{
    private static readonly string Model = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    [Fact]
    public void Finish_ScoresLetGoBeforeTheInterventions_AndTheAuditStillCompletes()
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-release-" + Guid.NewGuid().ToString("N"));
        try
        {
            var table = WriteSet(dir);
            var model = ModelIntake.Load(Model);
            using var pass = new ActivationPass(model.Plan, model.RewrittenModel, new PassOptions { BatchSize = 16 });
            var act = pass.Run(table, null, CancellationToken.None);
            Exception? readDuringInterventions = null;

            var result = AuditPipeline.Finish(pass, table, model.Plan, act, new AuditPolicy(), 1.0, (stage, _) =>
            {
                if (stage == AuditStage.Interventions)
                    readDuringInterventions = Record.Exception(() => act.Scores.ReadUnits(0, 1, new float[table.Items.Count]));
            });

            // The scores matrix (up to the scores limit in memory) is gone before the interventions build their session.
            Assert.IsType<ObjectDisposedException>(readDuringInterventions);
            Assert.NotEmpty(result.Findings);
        }
        finally
        {
            Directory.Delete(dir, recursive: true);
        }
    }

    [Fact]
    public async Task FinishChunks_ChunksThroughStreams_EqualsOneProcessRun()
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-chunks-" + Guid.NewGuid().ToString("N"));
        try
        {
            var table = WriteSet(dir);
            var model = ModelIntake.Load(Model);
            var options = new PassOptions { BatchSize = 16 };
            var policy = new AuditPolicy();

            var single = AuditPipeline.Run(new AuditRequest(Model, dir, new ModelLoadOptions(), policy, options, Path.Combine(dir, "work"))).Result;
            var written = new List<byte[]>();
            foreach (var (start, count) in new[] { (0, 37), (37, 30), (67, 23) })
            {
                using var ms = new MemoryStream();
                AuditPipeline.RunChunk(model, table, start, count, options).Write(ms);
                written.Add(ms.ToArray());
            }
            var merged = AuditPipeline.FinishChunks(model, table, written.Select(b => ChunkResult.Read(new MemoryStream(b))).ToList(), policy, options, 1.0);
            // The same chunks handed over one at a time, each read from its stream only when the merge asks for it.
            var streamed = await AuditPipeline.FinishChunksAsync(model, table, async merger =>
            {
                foreach (var bytes in written)
                {
                    await Task.Yield();
                    merger.Add(ChunkResult.Read(new MemoryStream(bytes)));
                }
                return 1.0;
            }, policy, options);

            Assert.NotEmpty(single.Findings);
            foreach (var result in new[] { merged, streamed })
            {
                Assert.Equal(single.Verdict, result.Verdict);
                Assert.Equal(single.Findings.Select(f => (f.Layer, f.Unit, f.Attribute, f.Value, f.QValue)), result.Findings.Select(f => (f.Layer, f.Unit, f.Attribute, f.Value, f.QValue)));
                Assert.Equal(single.Findings.SelectMany(f => f.Exemplars.Select(e => (e.Item, e.Score, e.Box))), result.Findings.SelectMany(f => f.Exemplars.Select(e => (e.Item, e.Score, e.Box))));
                Assert.Equal(single.Attributes.Select(a => (a.Name, a.Leakage)), result.Attributes.Select(a => (a.Name, a.Leakage)));
                Assert.Equal(single.Groups, result.Groups);
            }
            Assert.Equal(Timeless(merged), Timeless(streamed));
        }
        finally
        {
            Directory.Delete(dir, recursive: true);
        }
    }

    // The whole document but the clock: when it was made and how long each phase took.
    private static string Timeless(AuditSvc.Core.Audits.AuditResult r) => AuditSvc.Core.Audits.AuditJson.Serialize(
        r with { CreatedAt = default, Phases = null, Pass = r.Pass with { InterventionSeconds = 0 } });

    /// <summary>90 invented 64×64 pictures in three classes, a white corner mark linked to one of them.</summary>
    internal static AuditSvc.Core.ImageSets.ItemTable WriteSet(string dir)
    {
        Directory.CreateDirectory(dir);
        var rng = new Random(9);
        string[] labels = ["sound", "spotted", "mouldy"];
        var lines = new List<string> { "image,label,site" };
        for (int i = 0; i < 90; i++)
        {
            using var img = new Image<Rgb24>(64, 64);
            bool marked = rng.NextDouble() < (i % 3 == 2 ? 0.8 : 0.2);
            for (int y = 0; y < 64; y++)
                for (int x = 0; x < 64; x++)
                    img[x, y] = marked && x > 50 && y > 55 ? new Rgb24(255, 255, 255) : new Rgb24((byte)rng.Next(100, 200), (byte)rng.Next(100, 200), 40);
            img.SaveAsPng(Path.Combine(dir, $"{i}.png"));
            lines.Add($"{i}.png,{labels[i % 3]},{(marked ? "east" : "west")}");
        }
        File.WriteAllLines(Path.Combine(dir, "manifest.csv"), lines);
        return SetIntake.Read(dir, labels, dir);
    }
}
