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
    public void FinishChunks_ChunksThroughStreams_EqualsOneProcessRun()
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-chunks-" + Guid.NewGuid().ToString("N"));
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
        var table = SetIntake.Read(dir, labels, dir);
        var model = ModelIntake.Load(Model);
        var options = new PassOptions { BatchSize = 16 };
        var policy = new AuditPolicy();

        var single = AuditPipeline.Run(new AuditRequest(Model, dir, new ModelLoadOptions(), policy, options, Path.Combine(dir, "work"))).Result;
        var chunks = new List<ChunkResult>();
        foreach (var (start, count) in new[] { (0, 37), (37, 30), (67, 23) })
        {
            using var ms = new MemoryStream();
            AuditPipeline.RunChunk(model, table, start, count, options).Write(ms);
            ms.Position = 0;
            chunks.Add(ChunkResult.Read(ms));
        }
        var merged = AuditPipeline.FinishChunks(model, table, chunks, policy, options, 1.0);

        Assert.NotEmpty(single.Findings);
        Assert.Equal(single.Verdict, merged.Verdict);
        Assert.Equal(single.Findings.Select(f => (f.Layer, f.Unit, f.Attribute, f.Value, f.QValue)), merged.Findings.Select(f => (f.Layer, f.Unit, f.Attribute, f.Value, f.QValue)));
        Assert.Equal(single.Findings.SelectMany(f => f.Exemplars.Select(e => e.Item)), merged.Findings.SelectMany(f => f.Exemplars.Select(e => e.Item)));
        Assert.Equal(single.Attributes.Select(a => (a.Name, a.Leakage)), merged.Attributes.Select(a => (a.Name, a.Leakage)));
        Assert.Equal(single.Groups, merged.Groups);
    }
}
