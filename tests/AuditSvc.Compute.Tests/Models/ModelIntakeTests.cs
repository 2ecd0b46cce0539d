using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Core.Models;
using Google.Protobuf;
using Microsoft.ML.OnnxRuntime;
using Onnx;

namespace AuditSvc.Compute.Tests.Models;

public class ModelIntakeTests
{
    private static void AssertClose(FloatTensor expected, FloatTensor actual, float relative)
    {
        Assert.Equal(expected.Shape, actual.Shape);
        float scale = Math.Max(1f, expected.Data.Max(Math.Abs));
        for (int i = 0; i < expected.Data.Length; i++)
            Assert.True(Math.Abs(expected.Data[i] - actual.Data[i]) <= relative * scale,
                $"element {i}: {expected.Data[i]} vs {actual.Data[i]}");
    }

    [Fact]
    public void Load_SmallCnn_ReadTensorsEqualUnoptimisedOriginal()
    {
        using var dir = new TempDir();
        var g = TestModels.SmallCnn();
        var loaded = ModelIntake.Load(g.Save(dir.Path, "cnn.onnx"));
        var plan = loaded.Plan;

        // The original graph made to output the same tensors, run with every optimisation off.
        var reference = g.Model.Clone();
        foreach (var l in plan.ReadLayers) reference.Graph.Output.Add(new ValueInfoProto { Name = l.Name });
        var image = OrtRunner.Noise([1, 3, 32, 32], seed: 5);
        var expected = OrtRunner.Run(reference.ToByteArray(), "image", image, level: GraphOptimizationLevel.ORT_DISABLE_ALL);
        // The rewritten graph as the activation pass runs it, optimised.
        var names = new[] { plan.OutputName }.Concat(plan.ReadLayers.Select(l => l.Name)).ToArray();
        var actual = OrtRunner.Run(loaded.RewrittenModel, "image", image, names, GraphOptimizationLevel.ORT_ENABLE_ALL);

        using var session = new InferenceSession(loaded.RewrittenModel);
        Assert.Equal(names, session.OutputNames);
        foreach (var name in names) AssertClose(expected[name], actual[name], 1e-5f);
    }

    [Fact]
    public void Load_FixedBatchOneThatBatches_FreesBatchAndBatchEqualsSingles()
    {
        using var dir = new TempDir();
        var loaded = ModelIntake.Load(TestModels.SmallCnn(batch: 1).Save(dir.Path, "cnn.onnx"));
        Assert.Equal(BatchMode.Batched, loaded.Plan.Batch);

        var batch = OrtRunner.Noise([3, 3, 32, 32], seed: 9);
        var together = OrtRunner.Run(loaded.RewrittenModel, "image", batch);
        int per = 3 * 32 * 32;
        for (int b = 0; b < 3; b++)
        {
            var alone = OrtRunner.Run(loaded.RewrittenModel, "image", new FloatTensor([1, 3, 32, 32], batch.Data.AsSpan(b * per, per).ToArray()));
            foreach (var (name, t) in alone)
            {
                var slice = new FloatTensor([1, .. together[name].Shape[1..]], together[name].Data.AsSpan(b * t.Data.Length, t.Data.Length).ToArray());
                AssertClose(t, slice, 1e-4f);
            }
        }
    }

    [Fact]
    public void Load_ReshapeFixedToBatchOne_KeepsConcurrentSingle()
    {
        using var dir = new TempDir();
        var loaded = ModelIntake.Load(TestModels.SmallCnn(batch: 1, fixedReshape: true).Save(dir.Path, "cnn.onnx"));
        Assert.Equal(BatchMode.ConcurrentSingle, loaded.Plan.Batch);
        var model = ModelProto.Parser.ParseFrom(loaded.RewrittenModel);
        Assert.Equal(1, model.Graph.Input[0].Type.TensorType.Shape.Dim[0].DimValue);
    }

    [Fact]
    public void Load_CheckBatchOff_KeepsConcurrentSingle()
    {
        using var dir = new TempDir();
        var loaded = ModelIntake.Load(TestModels.SmallCnn().Save(dir.Path, "cnn.onnx"), new ModelLoadOptions(CheckBatch: false));
        Assert.Equal(BatchMode.ConcurrentSingle, loaded.Plan.Batch);
    }

    [Fact]
    public void Load_SmallCnn_DefaultsAreLastActivationPerResolutionAndPenultimate()
    {
        using var dir = new TempDir();
        var plan = ModelIntake.Load(TestModels.SmallCnn().Save(dir.Path, "cnn.onnx")).Plan;
        var read = plan.ReadLayers.Select(l => (l.OpType, l.Channels, l.Height, l.Width, l.Rank)).ToArray();
        // 32×32: the 8-channel Relu (the 4-channel one is skipped as too narrow); 16×16: the residual Relu;
        // 8×8: the last Relu; then the Flatten feeding the Gemm.
        Assert.Equal([("Relu", 8, 32, 32, 4), ("Relu", 8, 16, 16, 4), ("Relu", 16, 8, 8, 4), ("Flatten", 16, 1, 1, 2)], read);
        Assert.Equal(5, plan.ClassCount);
        Assert.False(plan.OutputIsProbabilities);
        Assert.Equal(InputRecipe.ImageNetMean, plan.Recipe.Mean);
        Assert.Equal((32, 32, ResizeMode.Stretch, ChannelOrder.Rgb), (plan.Recipe.Width, plan.Recipe.Height, plan.Recipe.Resize, plan.Recipe.Order));
        Assert.Equal(64, plan.Sha256.Length);
        Assert.All(plan.ReadLayers, l => Assert.True(l.IsDefault));
        Assert.Equal(ReceptiveFields.Whole(32, 32), plan.ReadLayers[^1].Field);
    }

    [Fact]
    public void Load_SoftmaxOutput_SaysProbabilities()
    {
        using var dir = new TempDir();
        var plan = ModelIntake.Load(TestModels.SmallCnn(softmax: true).Save(dir.Path, "cnn.onnx")).Plan;
        Assert.True(plan.OutputIsProbabilities);
        Assert.Equal("Flatten", plan.ReadLayers[^1].OpType);
    }

    [Fact]
    public void Load_ExplicitLayers_OverrideDefaultsInGivenOrder()
    {
        using var dir = new TempDir();
        string path = TestModels.SmallCnn().Save(dir.Path, "cnn.onnx");
        var all = ModelIntake.Load(path).Plan.Layers;
        string[] wanted = [all[^1].Name, all[0].Name];
        var loaded = ModelIntake.Load(path, new ModelLoadOptions(Layers: wanted));
        Assert.Equal(wanted, loaded.Plan.ReadLayers.Select(l => l.Name));
        var outputs = ModelProto.Parser.ParseFrom(loaded.RewrittenModel).Graph.Output.Select(o => o.Name);
        Assert.Equal(new[] { loaded.Plan.OutputName }.Concat(wanted), outputs);
    }

    [Fact]
    public void Load_SymbolicSizeWithoutSize_AsksForSize()
    {
        using var dir = new TempDir();
        var g = new OnnxGraphBuilder();
        var x = g.Input("image", null, 3, null, null);
        var logits = g.Gemm(g.Flatten(g.GlobalAveragePool(g.Relu(g.Conv(x, 3, 8, 3, 1, 1)))), 8, 2);
        g.Output(logits, null, 2);
        string path = g.Save(dir.Path, "free.onnx");

        var e = Assert.Throws<AuditInputException>(() => ModelIntake.Load(path));
        Assert.Contains("--size", e.Message);

        var loaded = ModelIntake.Load(path, new ModelLoadOptions(Recipe: new RecipeOverrides(Width: 40, Height: 24)));
        Assert.Equal(BatchMode.Batched, loaded.Plan.Batch);
        var relu = loaded.Plan.Layers.Single(l => l.OpType == "Relu");
        Assert.Equal((8, 24, 40), (relu.Channels, relu.Height, relu.Width));
        Assert.Equal(new RfAxis(3, 1, 0), relu.Field.X);
    }
}
