using System.Text.Json.Nodes;

namespace AuditSvc.Cli.Tests.Commands;

/// <summary>`inspect` on the random-weight fixtures of tests/models: what it reads, in which layout, and why.</summary>
public class InspectModelFamiliesTests
{
    internal static string Fixture(string name) => Path.Combine(AppContext.BaseDirectory, "model-fixtures", name + ".onnx");

    [Fact]
    public void Inspect_VisionTransformer_SaysTokensArePatchesAndAttentionSeesAll()
    {
        var (status, stdout, stderr) = CliProcess.Run("inspect", "--model", Fixture("vit"));
        Assert.True(status == 0, stderr);
        Assert.Contains("tokens", stdout);
        Assert.Contains("attention makes its true receptive field the whole image", stdout);
        Assert.Contains("not read", stdout);
        Assert.Contains("from node '/blocks/blocks.0/attn/MatMul_1'", stdout);
    }

    [Fact]
    public void Inspect_ChannelsLastBlocksAndNormalisedInput_Json()
    {
        var (status, stdout, stderr) = CliProcess.Run("inspect", "--model", Fixture("convnext"), "--json");
        Assert.True(status == 0, stderr);
        var layers = JsonNode.Parse(stdout)!["layers"]!.AsArray();
        Assert.Contains(layers, l => (string)l!["layout"]! == "channels-last" && (string)l["name"]! == "/s1/norm/LayerNormalization_output_0");

        (status, stdout, stderr) = CliProcess.Run("inspect", "--model", Fixture("mobilenetv3-normalised"));
        Assert.True(status == 0, stderr);
        Assert.Contains("normalises its own input", stdout);
        Assert.Contains("+global", stdout);
    }

    [Fact]
    public void Inspect_Memory_PrintsPeakAndResidentPerStep()
    {
        // A printed measurement, not a memory assertion: only its shape is checked.
        var (status, stdout, stderr) = CliProcess.Run("inspect", "--model", Fixture("resnet"), "--memory");
        Assert.True(status == 0, stderr);
        foreach (var step in new[] { "intake", "pass session built", "first batch of", "after compacting GC and malloc_trim" })
            Assert.Contains(step, stdout);
        Assert.Matches(@"highest peak \d+ MB = [\d.]+x the model file; above the runtime \d+ MB = [\d.]+x the model file", stdout);
        Assert.Matches(@"\d+ MB resident before the intake, \d+ MB with ONNX Runtime loaded", stdout);
    }
}
