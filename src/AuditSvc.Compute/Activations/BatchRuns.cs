using AuditSvc.Compute.Models;
using Microsoft.ML.OnnxRuntime;
using Microsoft.ML.OnnxRuntime.Tensors;

namespace AuditSvc.Compute.Activations;

/// <summary>Whether a session over a graph whose batch was freed gives, batched, what it gives one image at a time.</summary>
internal static class BatchRuns
{
    /// <summary>
    /// Runs <paramref name="images"/> noise images as one batch and then one by one, and compares every float output
    /// image by image (<see cref="GraphRewriter.Agrees"/>): the class scores, the in-graph maxima and the 2-D layers, or
    /// the full maps. The arg-max positions (int64) are not compared: on a near tie a rounding difference between the two
    /// runs may move one legitimately, and a batch that mixes images changes the maxima and the class scores anyway.
    /// A batch the runtime refuses, or whose outputs are not batch × the single outputs, does not agree.
    /// </summary>
    public static bool Agree(ModelRunner runner, int images = 2, int seed = 17)
    {
        var recipe = runner.Plan.Recipe;
        int slot = runner.Channels * recipe.Height * recipe.Width;
        var noise = OrtRunner.Noise([images, runner.Channels, recipe.Height, recipe.Width], seed);
        var together = new List<float[]?>();
        try
        {
            runner.Run(noise.Data, images, (cls, layers) =>
            {
                together.Add(cls.ToArray());
                foreach (var value in layers) together.Add(IsFloat(value) ? value.GetTensorDataAsSpan<float>().ToArray() : null);
            });
            for (int b = 0; b < images; b++)
            {
                int at = b;
                bool same = true;
                runner.Run(noise.Data.AsMemory(b * slot, slot), 1, (cls, layers) =>
                {
                    same = Part(together[0]!, cls, at, images);
                    for (int o = 0; same && o < layers.Count; o++)
                        if (together[o + 1] is { } all) same = IsFloat(layers[o]) && Part(all, layers[o].GetTensorDataAsSpan<float>(), at, images);
                });
                if (!same) return false;
            }
            return true;
        }
        catch (OnnxRuntimeException)
        {
            return false;
        }
    }

    private static bool IsFloat(OrtValue value) =>
        value.OnnxType == OnnxValueType.ONNX_TYPE_TENSOR && value.GetTensorTypeAndShape().ElementDataType == TensorElementType.Float;

    private static bool Part(float[] all, ReadOnlySpan<float> alone, int at, int images) =>
        all.Length == (long)alone.Length * images && GraphRewriter.Agrees(alone, all.AsSpan(at * alone.Length, alone.Length));
}
