using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Models;
using AuditSvc.Compute.Tests.Models;
using AuditSvc.Core;
using AuditSvc.Core.Gate;
using AuditSvc.Core.Models;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.Audits;

/// <summary>
/// The in-process audit overlaps its steps (the set's intake with the model's, the pass's session build with the first
/// decodes, the batch check on the pass's own session); none of that may change what it finds or which error it names.
/// </summary>
public class AuditPipelineTests
{
    private static void WriteSet(string dir, int count)
    {
        Directory.CreateDirectory(dir);
        var rng = new Random(3);
        var lines = new List<string> { "image,label,site" };
        string[] labels = ["0", "1", "2"];
        for (int i = 0; i < count; i++)
        {
            using var img = new Image<Rgb24>(40, 32);
            for (int y = 0; y < 32; y++)
                for (int x = 0; x < 40; x++) img[x, y] = new Rgb24((byte)rng.Next(256), (byte)rng.Next(256), (byte)rng.Next(256));
            img.SaveAsPng(Path.Combine(dir, $"{i}.png"));
            lines.Add($"{i}.png,{labels[i % 3]},{(rng.Next(2) == 0 ? "east" : "west")}");
        }
        File.WriteAllLines(Path.Combine(dir, "manifest.csv"), lines);
    }

    private static AuditRequest Request(string model, string data, string work) =>
        new(model, data, new ModelLoadOptions(), new AuditPolicy(), new PassOptions { BatchSize = 4 }, work);

    [Theory]
    [InlineData(false, BatchMode.Batched)]
    [InlineData(true, BatchMode.ConcurrentSingle)]
    public void Run_FixedBatchOne_IsSettledByThePass_AsTheIntakeCheckWould(bool fixedReshape, BatchMode settled)
    {
        using var dir = new TempDir();
        string model = TestModels.SmallCnn(batch: 1, fixedReshape: fixedReshape).Save(dir.Path, "cnn.onnx");
        string data = Path.Combine(dir.Path, "set");
        WriteSet(data, 30);

        var run = AuditPipeline.Run(Request(model, data, Path.Combine(dir.Path, "work")));

        // The intake freed the batch unchecked; the pass settled it as the intake's own check does.
        Assert.Equal(settled, run.Plan.Batch);
        Assert.False(run.Plan.BatchUnchecked);
        var checkedAtIntake = ModelIntake.Load(model);
        Assert.Equal(settled, checkedAtIntake.Plan.Batch);
        using var pass = new ActivationPass(checkedAtIntake.Plan, checkedAtIntake.RewrittenModel, new PassOptions { BatchSize = 4 });
        var reference = pass.Run(SetIntake.Read(Path.Combine(data, "manifest.csv"), null, Path.Combine(dir.Path, "work2")), null, CancellationToken.None);
        Assert.Equal(reference.Predicted.Count(p => p >= 0), run.Result.Pass.Scored);
        Assert.Equal(settled == BatchMode.Batched ? "batched" : "concurrent-single", run.Result.Model.BatchMode);
    }

    [Fact]
    public void RenderReport_PicturesMadeOnEveryCore_GiveTheReportMadeOneByOne()
    {
        using var dir = new TempDir();
        // The demo model on a set with a planted cue: findings, so pictures.
        string model = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");
        string data = Path.Combine(dir.Path, "set");
        Activations.ChunkResultTests.WriteSet(data);
        var run = AuditPipeline.Run(Request(model, data, Path.Combine(dir.Path, "work")) with { Pass = new PassOptions { BatchSize = 16 } });
        Assert.NotEmpty(run.Result.Findings);
        AuditSvc.Compute.Reporting.ExemplarImages Pictures() => new(item => run.Table.Items[item].Path, run.Plan.Recipe);

        string oneByOne = AuditSvc.Core.Reporting.HtmlReport.Render(run.Result, Pictures());
        Assert.Contains("data:image/png;base64,", oneByOne, StringComparison.Ordinal);
        Assert.Equal(oneByOne, Pictures().RenderReport(run.Result));
    }

    [Fact]
    public void Run_ModelAndSetBothBad_NamesTheModelFirst()
    {
        using var dir = new TempDir();
        string model = Path.Combine(dir.Path, "broken.onnx");
        File.WriteAllText(model, "not a protobuf at all");
        var ex = Assert.Throws<AuditInputException>(() =>
            AuditPipeline.Run(Request(model, Path.Combine(dir.Path, "no-such-set"), Path.Combine(dir.Path, "work"))));
        Assert.Contains("broken.onnx", ex.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Run_GoodModelBadSet_NamesTheSet()
    {
        using var dir = new TempDir();
        string model = TestModels.SmallCnn().Save(dir.Path, "cnn.onnx");
        var ex = Assert.Throws<AuditInputException>(() =>
            AuditPipeline.Run(Request(model, Path.Combine(dir.Path, "no-such-set"), Path.Combine(dir.Path, "work"))));
        Assert.Contains("no-such-set", ex.Message, StringComparison.Ordinal);
    }
}
