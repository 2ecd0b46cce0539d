using AuditSvc.Compute.Models;

namespace AuditSvc.Compute.Tests.Models;

/// <summary>
/// The shape probe hands the runtime zero stand-ins for the large float weights instead of the weights themselves: the
/// shapes it finds must be those the real weights give, on every model file in the repository (and ResNet-18 when the
/// bench's package was restored).
/// </summary>
public class ProbeStandInTests
{
    public static TheoryData<string> ModelFiles() => RawWeightTagsTests.ModelFiles();

    [Theory]
    [MemberData(nameof(ModelFiles))]
    public void ProbeShapes_WithStandIns_EqualsTheRealWeights(string relative)
    {
        string path = Path.Combine(AppContext.BaseDirectory, relative);
        var (model, _) = ModelIntake.ParseHashed(path);
        var input = OnnxGuard.ImageInputOf(path, model);
        int h = input.Height ?? 64, w = input.Width ?? 64;
        long[] shape = input.ChannelsLast ? [1, h, w, input.Channels] : [1, input.Channels, h, w];

        var real = OrtRunner.ProbeShapes(model, input.Name, shape, standIns: false);
        var standIn = OrtRunner.ProbeShapes(model, input.Name, shape);
        // Stand-ins were used wherever there is a float weight of 64 KiB or more, not left to the fallback.
        bool large = model.Graph.Initializer.Any(t => t.DataType == 1 && t.RawData.Length >= 64 * 1024);
        Assert.Equal(large, OrtRunner.ProbedWithStandIns);

        Assert.Equal(real.Keys.Order(StringComparer.Ordinal), standIn.Keys.Order(StringComparer.Ordinal));
        foreach (var (name, dims) in real) Assert.Equal(dims, standIn[name]);
    }
}
