using AuditSvc.Core.Models;
using Google.Protobuf;
using Microsoft.ML.OnnxRuntime;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>Rewrites a graph so the read layers are outputs, and frees a fixed batch dimension when that is safe.</summary>
public static class GraphRewriter
{
    private const string BatchParam = "N";

    /// <summary>
    /// A copy of the model whose outputs are the class output followed by <paramref name="read"/>;
    /// with <paramref name="symbolicBatch"/> the input's and outputs' batch dimension becomes symbolic.
    /// </summary>
    public static ModelProto ExposeLayers(ModelProto model, string inputName, string classOutput,
        IReadOnlyList<LayerInfo> read, bool symbolicBatch)
    {
        var copy = model.Clone();
        var graph = copy.Graph;
        var classInfo = graph.Output.First(o => o.Name == classOutput).Clone();
        graph.Output.Clear();
        graph.Output.Add(classInfo);
        long opset = copy.OpsetImport.Where(o => o.Domain is "" or "ai.onnx").Select(o => o.Version).DefaultIfEmpty(13).Max();
        foreach (var layer in read)
        {
            long[] dims = layer.Rank == 4 ? [1, layer.Channels, layer.Height, layer.Width] : [1, layer.Channels];
            GraphAdapters.AddView(graph, layer, opset);
            graph.Output.Add(FloatInfo(layer.ReadName, dims));
        }
        if (symbolicBatch)
        {
            // Stale fixed-batch shapes in value_info would contradict the symbolic batch; ORT re-infers them.
            graph.ValueInfo.Clear();
            SetBatch(graph.Input.First(i => i.Name == inputName));
            foreach (var o in graph.Output) SetBatch(o);
        }
        return copy;
    }

    private static ValueInfoProto FloatInfo(string name, long[] dims)
    {
        var shape = new TensorShapeProto();
        foreach (var d in dims) shape.Dim.Add(new TensorShapeProto.Types.Dimension { DimValue = d });
        return new ValueInfoProto
        {
            Name = name,
            Type = new TypeProto { TensorType = new TypeProto.Types.Tensor { ElemType = (int)TensorProto.Types.DataType.Float, Shape = shape } },
        };
    }

    private static void SetBatch(ValueInfoProto info)
    {
        var dims = info.Type?.TensorType?.Shape?.Dim;
        if (dims is { Count: > 0 }) dims[0] = new TensorShapeProto.Types.Dimension { DimParam = BatchParam };
    }

    /// <summary>
    /// True when the symbolic-batch model run on a batch of <paramref name="batch"/> random images gives,
    /// on every output, what the batch-1 model gives image by image, within 1e-4 relative to the output's
    /// largest magnitude (at least 1). A model that cannot run batched (a Reshape fixed to 1, say) fails.
    /// </summary>
    public static bool BatchMatchesSingles(ModelProto single, ModelProto batched, string inputName, long[] imageShape, int batch = 3, int seed = 17)
    {
        long[] batchShape = [batch, .. imageShape[1..]];
        var noise = OrtRunner.Noise(batchShape, seed);
        int per = noise.Data.Length / batch;
        IReadOnlyDictionary<string, FloatTensor> together;
        try
        {
            together = OrtRunner.Run(batched, inputName, noise);
        }
        catch (OnnxRuntimeException)
        {
            return false;
        }
        // The batched session is gone before the single one is built: one copy of the weights in the runtime at a time.
        var ones = Enumerable.Range(0, batch)
            .Select(b => new FloatTensor([1, .. imageShape[1..]], noise.Data.AsSpan(b * per, per).ToArray())).ToList();
        // Each single image's outputs are compared while the runtime holds them: no copy of them is kept.
        bool same = true;
        OrtRunner.Visit(single, inputName, ones, (b, name, data) =>
        {
            if (!same) return;
            if (!together.TryGetValue(name, out var all) || all.Shape.Length == 0 || all.Shape[0] != batch
                || all.Data.Length != data.Length * batch)
            {
                same = false;
                return;
            }
            same = Agrees(data, all.Data.AsSpan(b * data.Length, data.Length));
        });
        return same;
    }

    /// <summary>
    /// True when <paramref name="inBatch"/> (one image's part of a batched output) matches <paramref name="alone"/> (the same
    /// image run alone) within 1e-4 relative to the largest magnitude of <paramref name="alone"/> (at least 1); NaN never matches.
    /// </summary>
    public static bool Agrees(ReadOnlySpan<float> alone, ReadOnlySpan<float> inBatch)
    {
        if (alone.Length != inBatch.Length) return false;
        float scale = 1f;
        foreach (float v in alone) scale = Math.Max(scale, Math.Abs(v));
        for (int i = 0; i < alone.Length; i++)
            if (!(Math.Abs(inBatch[i] - alone[i]) <= 1e-4f * scale)) return false;
        return true;
    }
}
