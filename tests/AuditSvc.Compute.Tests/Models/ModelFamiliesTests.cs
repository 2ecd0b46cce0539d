using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Core.Models;
using Google.Protobuf;

namespace AuditSvc.Compute.Tests.Models;

/// <summary>
/// Intake of the random-weight fixtures in tests/models (one per architecture family): what it reads, in which
/// layout, with which place grid and field. The pass through the reduced graph is checked against ONNX Runtime's
/// own full tensors for the layouts the intake converts (channels-last, tokens).
/// </summary>
public class ModelFamiliesTests
{
    internal static string Fixture(string name) => Path.Combine(AppContext.BaseDirectory, "model-fixtures", name + ".onnx");

    private static ModelPlan Plan(string name, ModelLoadOptions? options = null) => ModelIntake.Load(Fixture(name), options).Plan;

    [Theory]
    [InlineData("resnet")]
    [InlineData("densenet")]
    [InlineData("mobilenetv3-normalised")]
    [InlineData("efficientnet")]
    [InlineData("inception")]
    [InlineData("vgg-fixed-batch")]
    [InlineData("convnext")]
    [InlineData("vit")]
    [InlineData("channels-last-input")]
    [InlineData("binary-sigmoid")]
    [InlineData("classes-120")]
    public void Load_Fixture_ReadsSpatialLayersAndPenultimate(string name)
    {
        var plan = Plan(name);
        Assert.True(plan.ReadLayers.Count(l => l.Rank == 4 && l.Height * l.Width > 1) >= 2, string.Join(", ", plan.ReadLayers.Select(l => l.Name)));
        Assert.Contains(plan.ReadLayers, l => l.Rank == 2);
        // No read place is boxed as the whole image unless it is one: every spatial layer has a field smaller than its grid step × grid.
        Assert.All(plan.ReadLayers.Where(l => l.Rank == 4 && l.Height > 1), l => Assert.True(l.Field.Y.Jump < 64, $"{l.Name}: {l.Field}"));
    }

    [Fact]
    public void Load_ScaleFixture_ReadsFiveThousandUnitsByDefault()
    {
        // bench/scale_run.sh audits with this model and docs/performance.md states its 5,000 units: keep them true.
        var plan = Plan("wide-5000-units");
        Assert.Equal(5000, plan.ReadLayers.Sum(l => l.Channels));
        Assert.Equal([16, 8, 4, 2, 1], plan.ReadLayers.Select(l => l.Height).ToArray());
        Assert.All(plan.ReadLayers, l => Assert.Equal(1000, l.Channels));
        Assert.True(new FileInfo(Fixture("wide-5000-units")).Length < 1 << 20);
    }

    [Fact]
    public void Load_SqueezeExcitation_FieldsStayLocalAndAreMarkedGlobal()
    {
        var plan = Plan("mobilenetv3-normalised");
        var last = plan.ReadLayers.Last(l => l.Rank == 4);
        Assert.Equal(4, last.Height);
        Assert.Equal(16, last.Field.Y.Jump);
        Assert.True(last.Field.Global);
        Assert.Contains("squeeze-excitation", last.PlaceNote);
    }

    [Fact]
    public void Load_NormalisationInsideGraph_RecipeDoesNotNormaliseTwice()
    {
        var plan = Plan("mobilenetv3-normalised");
        Assert.Equal([0f, 0f, 0f], plan.Recipe.Mean);
        Assert.Equal([1f, 1f, 1f], plan.Recipe.Std);
        Assert.Contains(plan.Notes, n => n.Contains("normalises its own input", StringComparison.Ordinal) && n.Contains("Sub '/Sub'", StringComparison.Ordinal));
        var plain = Plan("resnet");
        Assert.Equal(InputRecipe.ImageNetMean, plain.Recipe.Mean);
        Assert.Empty(plain.Notes);
    }

    [Fact]
    public void Load_NormalisationInsideGraphAndExplicitMean_SaysSo()
    {
        var plan = Plan("mobilenetv3-normalised", new ModelLoadOptions(Recipe: new RecipeOverrides(Mean: [0.5f, 0.5f, 0.5f])));
        Assert.Equal([0.5f, 0.5f, 0.5f], plan.Recipe.Mean);
        Assert.Contains(plan.Notes, n => n.Contains("double normalisation", StringComparison.Ordinal));
    }

    [Fact]
    public void Load_ConvNeXt_ChannelsLastTensorsAreSpatialLayers()
    {
        var plan = Plan("convnext");
        var nhwc = plan.Layers.Where(l => l.Layout == LayerLayout.ChannelsLast).ToList();
        Assert.Contains(nhwc, l => l.Name == "/s1/norm/LayerNormalization_output_0" && l.Channels == 24 && l.Height == 16 && l.Width == 16);
        Assert.Contains(nhwc, l => l.Name == "/s2/act/Mul_1_output_0" && l.Channels == 192 && l.Height == 8);
        // The per-place dense layers and norms leave the field of the depthwise 7×7 conv as it was.
        var dw = plan.Layers.Single(l => l.Name == "/s2/dw/Conv_output_0");
        Assert.Equal(dw.Field, plan.Layers.Single(l => l.Name == "/s2/act/Mul_1_output_0").Field);
        Assert.Contains(plan.ReadLayers, l => l.Name == "/s1/Add_output_0");
    }

    [Fact]
    public void Load_VisionTransformer_ReadsEveryEncoderBlockAsPatchTokens()
    {
        var plan = Plan("vit");
        var tokens = plan.ReadLayers.Where(l => l.Layout == LayerLayout.Tokens).ToList();
        // Three blocks, two residual additions each (after attention, after the MLP).
        Assert.Equal(6, tokens.Count);
        Assert.All(tokens, l =>
        {
            Assert.Equal(1, l.PrefixTokens);
            Assert.Equal((8, 8, 32), (l.Height, l.Width, l.Channels));
            Assert.Equal(new RfAxis(8, 8, 3.5), l.Field.X);
            Assert.True(l.Field.Global);
            Assert.Contains("attention", l.PlaceNote);
        });
        Assert.Contains(plan.ReadLayers, l => l.Name == "/embed/Conv_output_0");
        Assert.Contains(plan.Skipped, s => s.Reason.Contains("attention scores", StringComparison.Ordinal));
    }

    [Fact]
    public void Load_ChannelsLastInput_FeedsThroughTranspose()
    {
        var plan = Plan("channels-last-input");
        Assert.StartsWith("auditsvc_nchw_", plan.InputName, StringComparison.Ordinal);
        Assert.Equal((64, 64), (plan.Recipe.Width, plan.Recipe.Height));
        Assert.Contains(plan.Notes, n => n.Contains("channels-last input 'image'", StringComparison.Ordinal));
    }

    [Fact]
    public void Load_SingleSigmoidOutput_ReadsTwoClasses()
    {
        var plan = Plan("binary-sigmoid");
        Assert.Equal(2, plan.ClassCount);
        Assert.True(plan.OutputIsProbabilities);
        Assert.Contains(plan.Notes, n => n.Contains("sigmoid probability", StringComparison.Ordinal));
    }

    [Fact]
    public void Load_120Classes_CountsThem() => Assert.Equal(120, Plan("classes-120").ClassCount);

    [Fact]
    public void Load_DynamicSize_NeedsSizeAndTakesAny()
    {
        var e = Assert.Throws<AuditInputException>(() => Plan("resnet-dynamic-size"));
        Assert.Equal("--size", e.Subject);
        var at64 = Plan("resnet-dynamic-size", new ModelLoadOptions(Recipe: new RecipeOverrides(Width: 64, Height: 64)));
        var at96 = Plan("resnet-dynamic-size", new ModelLoadOptions(Recipe: new RecipeOverrides(Width: 96, Height: 96)));
        Assert.Equal(4, at64.ReadLayers.Last(l => l.Rank == 4).Height);
        Assert.Equal(6, at96.ReadLayers.Last(l => l.Rank == 4).Height);
    }

    [Fact]
    public void Load_FixedBatchOne_IsFreedAfterTheCheck() => Assert.Equal(BatchMode.Batched, Plan("vgg-fixed-batch").Batch);

    [Theory]
    [InlineData("vit", "/blocks/blocks.1/Add_1_output_0")]
    [InlineData("convnext", "/s2/act/Mul_1_output_0")]
    [InlineData("channels-last-input", "/net/layers/layers.1/Relu_output_0")]
    public void Pass_ConvertedLayout_MatchesFullTensorFromRuntime(string name, string layerName)
    {
        var loaded = ModelIntake.Load(Fixture(name), new ModelLoadOptions([layerName]));
        var layer = loaded.Plan.ReadLayers.Single();
        const int images = 3;
        var noise = OrtRunner.Noise([images, 3, 64, 64], 5);
        using var pass = new ActivationPass(loaded.Plan, loaded.RewrittenModel, new PassOptions { TopN = images, BatchSize = 2, InferenceThreads = 1, DecodeThreads = 1 });
        var result = pass.RunTensors(noise.Data, images, null, CancellationToken.None);

        // Reference: the original tensor, read straight from ONNX Runtime, one image at a time.
        var model = Onnx.ModelProto.Parser.ParseFrom(File.ReadAllBytes(Fixture(name)));
        model.Graph.Output.Add(new Onnx.ValueInfoProto { Name = layerName });
        string input = model.Graph.Input[0].Name;
        for (int i = 0; i < images; i++)
        {
            var one = noise.Data.AsSpan(i * 3 * 64 * 64, 3 * 64 * 64).ToArray();
            var fed = name == "channels-last-input" ? ToNhwc(one) : new FloatTensor([1, 3, 64, 64], one);
            var full = OrtRunner.Run(model.ToByteArray(), input, fed, [layerName])[layerName];
            for (int c = 0; c < layer.Channels; c++)
            {
                var (max, y, x) = Reference(full, layer, c);
                var peak = result.Top.Raw(c).ToArray().Single(p => p.Item == i);
                Assert.Equal(max, peak.Score, 3);
                Assert.Equal((y, x), ((int)peak.Y, (int)peak.X));
            }
        }
    }

    [Fact]
    public void Load_LayerThatIsAttentionScores_NamesNodeAndReason()
    {
        var e = Assert.Throws<AuditInputException>(() => Plan("vit", new ModelLoadOptions(["/blocks/blocks.0/attn/MatMul_1_output_0"])));
        Assert.Equal("--layers", e.Subject);
        Assert.Contains("from node '/blocks/blocks.0/attn/MatMul_1' (MatMul)", e.Message);
        Assert.Contains("attention scores", e.Message);
    }

    [Fact]
    public void Load_SingleLogitOutput_ReadsTwoClassesWhoseSoftmaxIsTheSigmoid()
    {
        // The binary fixture without its final Sigmoid: the output is one logit z.
        using var dir = new TempDir();
        var m = Onnx.ModelProto.Parser.ParseFrom(File.ReadAllBytes(Fixture("binary-sigmoid")));
        var sigmoid = m.Graph.Node.Single(n => n.OpType == "Sigmoid");
        m.Graph.Node.Remove(sigmoid);
        foreach (var n in m.Graph.Node)
            for (int i = 0; i < n.Output.Count; i++)
                if (n.Output[i] == sigmoid.Input[0]) n.Output[i] = sigmoid.Output[0];
        string path = Path.Combine(dir.Path, "logit.onnx");
        File.WriteAllBytes(path, m.ToByteArray());
        var loaded = ModelIntake.Load(path);
        Assert.Equal(2, loaded.Plan.ClassCount);
        Assert.False(loaded.Plan.OutputIsProbabilities);
        Assert.Contains(loaded.Plan.Notes, n => n.Contains("a logit", StringComparison.Ordinal));

        var noise = OrtRunner.Noise([1, 3, 64, 64], 3);
        float z = OrtRunner.Run(m.ToByteArray(), "image", noise)[sigmoid.Output[0]].Data[0];
        var two = OrtRunner.Run(loaded.RewrittenModel, loaded.Plan.InputName, noise, [loaded.Plan.OutputName])[loaded.Plan.OutputName].Data;
        var p = two.ToArray();
        ActivationPass.Softmax(p);
        // σ(z) = 1 / (1 + e^−z): the positive class's probability (common practice for one-logit binary heads).
        Assert.Equal(1 / (1 + Math.Exp(-z)), p[1], 5);
    }

    [Fact]
    public void Load_SiLUExportedAsSigmoidTimesInput_ReadsTheProductNotTheGate()
    {
        var plan = Plan("efficientnet");
        var last = plan.ReadLayers.Last(l => l.Rank == 4);
        Assert.Equal("/last/last.2/Mul_output_0", last.Name);
        Assert.True(last.IsActivation);
        Assert.DoesNotContain(plan.ReadLayers, l => l.OpType == "Sigmoid");
    }

    [Theory]
    [InlineData("densenet", "/b2/Concat_2_output_0", 48)]
    [InlineData("inception", "/i2/Concat_output_0", 48)]
    public void Load_MultiBranchBlock_ReadsTheConcatenatedOutput(string name, string layer, int channels)
    {
        var read = Plan(name).ReadLayers.Single(l => l.Name == layer);
        Assert.Equal(channels, read.Channels);
        Assert.True(read.MergesPaths);
    }

    [Fact]
    public void Load_GeluThroughErf_IsAnActivation() =>
        Assert.True(Plan("convnext").Layers.Single(l => l.Name == "/s2/act/Mul_1_output_0").IsActivation);

    private static FloatTensor ToNhwc(float[] nchw)
    {
        var d = new float[nchw.Length];
        for (int c = 0; c < 3; c++)
            for (int p = 0; p < 64 * 64; p++) d[p * 3 + c] = nchw[c * 64 * 64 + p];
        return new FloatTensor([1, 64, 64, 3], d);
    }

    private static (float Max, int Y, int X) Reference(FloatTensor t, LayerInfo layer, int channel)
    {
        float best = float.NegativeInfinity;
        int at = 0;
        int places = layer.Height * layer.Width;
        for (int p = 0; p < places; p++)
        {
            float v = layer.Layout switch
            {
                LayerLayout.Tokens => t.Data[(layer.PrefixTokens + p) * layer.Channels + channel],
                LayerLayout.ChannelsLast => t.Data[p * layer.Channels + channel],
                _ => t.Data[channel * places + p],
            };
            if (v > best) { best = v; at = p; }
        }
        return (best, at / layer.Width, at % layer.Width);
    }
}
