using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Models;
using AuditSvc.Core.Activations;

namespace AuditSvc.Compute.Tests.Activations;

/// <summary>
/// The two in-graph reductions (one MaxPool with indices; ArgMax then GatherElements or ReduceMax) against the plain
/// reduce over full maps: the same maxima and first positions, bit for bit, ties included.
/// </summary>
public class ReducedGraphTests
{
    private static readonly string Model = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    private static (float[] Scores, short[] Y, short[] X) Reduce(LoadedModel model, byte[] onnx, bool reduced, float[] input, int count)
    {
        using var runner = new ModelRunner(model.Plan, onnx, 1, spinning: false, reduced: reduced);
        var slices = new List<LayerSlice>();
        int units = 0;
        foreach (var layer in model.Plan.ReadLayers)
        {
            slices.Add(new LayerSlice(layer, units));
            units += layer.Channels;
        }
        var scores = new float[count * units];
        var y = new short[count * units];
        var x = new short[count * units];
        runner.Run(input, count, (_, layers) =>
        {
            int o = 0;
            foreach (var slice in slices)
            {
                if (reduced && slice.Layer.Rank == 4)
                {
                    LayerReduce.FromGraph(slice, layers[o], layers[o + 1], count, 0, units, scores, y, x);
                    o += 2;
                }
                else LayerReduce.Run(slice, layers[o++], count, 0, units, scores, y, x, parallel: false);
            }
        });
        return (scores, y, x);
    }

    [Fact]
    public void Rewrite_FusedAndUnfusedPeaks_EqualTheReduceOverFullMaps()
    {
        var model = ModelIntake.Load(Model);
        int slot = 3 * model.Plan.Recipe.Height * model.Plan.Recipe.Width, count = 5;
        var input = new float[count * slot];
        var rng = new Random(3);
        // Image 0 stays all zeros (flat maps: every position ties); image 1 is constant; the rest are noise.
        Array.Fill(input, 0.7f, slot, slot);
        for (int i = 2 * slot; i < input.Length; i++) input[i] = (float)(rng.NextDouble() * 4 - 2);
        var plain = Reduce(model, model.RewrittenModel, false, input, count);
        var fused = Reduce(model, ReducedGraph.Rewrite(model.RewrittenModel, model.Plan.ReadLayers, fusePeaks: true), true, input, count);
        var unfused = Reduce(model, ReducedGraph.Rewrite(model.RewrittenModel, model.Plan.ReadLayers, fusePeaks: false), true, input, count);
        foreach (var other in new[] { fused, unfused })
        {
            Assert.Equal(plain.Scores, other.Scores);
            Assert.Equal(plain.Y, other.Y);
            Assert.Equal(plain.X, other.X);
        }
    }

    [Fact]
    public void Rewrite_FusedPeaks_OneMaxPoolPerSpatialLayer()
    {
        var model = ModelIntake.Load(Model);
        var proto = Onnx.ModelProto.Parser.ParseFrom(ReducedGraph.Rewrite(model.RewrittenModel, model.Plan.ReadLayers));
        int spatial = model.Plan.ReadLayers.Count(l => l.Rank == 4);
        Assert.Equal(spatial, proto.Graph.Node.Count(n => n.OpType == "MaxPool" && n.Name.StartsWith("auditsvc_reduce_", StringComparison.Ordinal)));
        Assert.DoesNotContain(proto.Graph.Node, n => n.OpType is "ArgMax" or "GatherElements" && n.Name.StartsWith("auditsvc_reduce_", StringComparison.Ordinal));
    }

    [Theory]
    [InlineData(true)]
    [InlineData(false)]
    public void Rewrite_CopyingWeightsThrough_GivesTheModelThatParsingWholeGives(bool fusePeaks)
    {
        var model = ModelIntake.Load(Model);
        using var parsed = new MemoryStream();
        ReducedGraph.WriteParsed(model.RewrittenModel, model.Plan.ReadLayers, parsed, fusePeaks);
        var spliced = ReducedGraph.Rewrite(model.RewrittenModel, model.Plan.ReadLayers, fusePeaks);
        var expected = Onnx.ModelProto.Parser.ParseFrom(parsed.ToArray());
        var actual = Onnx.ModelProto.Parser.ParseFrom(spliced);
        Assert.Equal(expected, actual);
        Assert.Equal(expected.Graph.Initializer.Select(t => t.RawData), actual.Graph.Initializer.Select(t => t.RawData));
    }
}
