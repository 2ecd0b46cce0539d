using AuditSvc.Compute.Models;
using AuditSvc.Core.Models;

namespace AuditSvc.Compute.Tests.Models;

/// <summary>
/// Receptive fields through the ONNX path (weight dims, pads, auto_pad), checked against Araujo, Norris
/// &amp; Sim (2019), Distill, doi 10.23915/distill.00021: final-layer r, S and effective padding P.
/// </summary>
public class ModelIntakeFieldTests
{
    private static LayerInfo Layer(OnnxGraphBuilder g, string name)
    {
        using var dir = new TempDir();
        var plan = ModelIntake.Load(g.Save(dir.Path, "m.onnx"), new ModelLoadOptions(CheckBatch: false)).Plan;
        return plan.Layers.Single(l => l.Name == name);
    }

    private static double P(RfAxis a) => (a.Size - 1) / 2 - a.Offset;

    [Fact]
    public void Load_Vgg16Layout_Pool5MatchesPublishedTable()
    {
        var pool5 = Layer(TestModels.Vgg16(out var name), name);
        Assert.Equal((7, 7), (pool5.Height, pool5.Width));
        Assert.Equal(212, pool5.Field.X.Size); // r = 212
        Assert.Equal(32, pool5.Field.X.Jump);  // S = 32
        Assert.Equal(90, P(pool5.Field.X));    // P = 90, pads 1 on every 3×3 convolution
    }

    [Fact]
    public void Load_ResNet50V1Layout_MatchesPublishedTableWithSamePaddedPool()
    {
        var last = Layer(TestModels.ResNet50V1(out var name), name);
        Assert.Equal(483, last.Field.Y.Size); // r = 483
        Assert.Equal(32, last.Field.Y.Jump);  // S = 32
        // P = 239: the stem pool pads SAME_UPPER (nothing at the start on a 112 map), as TensorFlow does.
        Assert.Equal(239, P(last.Field.Y));
    }

    [Fact]
    public void Load_AlexNetV2Layout_MatchesPublishedTable()
    {
        var pool5 = Layer(TestModels.AlexNetV2(out var name), name);
        Assert.Equal(195, pool5.Field.X.Size); // r = 195
        Assert.Equal(32, pool5.Field.X.Jump);  // S = 32
        Assert.Equal(64, P(pool5.Field.X));    // P = 64
    }

    [Fact]
    public void Load_Vgg16Layout_DefaultsArePerResolutionAndPenultimate()
    {
        using var dir = new TempDir();
        var plan = ModelIntake.Load(TestModels.Vgg16(out _).Save(dir.Path, "vgg.onnx"), new ModelLoadOptions(CheckBatch: false)).Plan;
        // Resolutions 224, 112, 56, 28, 14 (their last Relu), 7 (pool5), then the Flatten.
        Assert.Equal([224, 112, 56, 28, 14, 7, 1], plan.ReadLayers.Select(l => l.Height));
        Assert.Equal(["Relu", "Relu", "Relu", "Relu", "Relu", "MaxPool", "Flatten"], plan.ReadLayers.Select(l => l.OpType));
    }
}
