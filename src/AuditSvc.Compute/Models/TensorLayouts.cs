using AuditSvc.Core.Models;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>The layout of one image-derived tensor and the place grid it carries.</summary>
/// <param name="Kind">Channels-first, channels-last or tokens; <see cref="LayerLayout.Vector"/> stands for [N,C,T],
/// a flattened channels-first map on its way to tokens (a copy, never read).</param>
/// <param name="GridH">Places along the image's height.</param>
/// <param name="GridW">Places along the image's width.</param>
/// <param name="Prefix">Leading tokens that are no place (class token), for tokens.</param>
public sealed record TensorLayout(LayerLayout Kind, int GridH, int GridW, int Prefix = 0);

/// <summary>
/// Follows the image's layout through the graph: which tensors are channels-first maps [N,C,H,W], channels-last
/// maps [N,H,W,C] (blocks that permute to apply LayerNorm and dense layers per place) and patch tokens [N,T,C]
/// (a map flattened and transposed, perhaps with a class token in front). A tensor gets a layout only when every
/// step from the image says where its places are; anything else (attention scores, heads split off) gets none
/// and is not a layer. Shapes come from the probe run at batch 1.
/// </summary>
public static class TensorLayouts
{
    private static readonly HashSet<string> MapOps = new(StringComparer.Ordinal)
        { "Conv", "ConvTranspose", "MaxPool", "AveragePool", "LpPool", "GlobalAveragePool", "GlobalMaxPool", "GlobalLpPool", "Pad", "Resize", "Upsample" };

    private static readonly HashSet<string> ReduceOps = new(StringComparer.Ordinal)
        { "ReduceMean", "ReduceSum", "ReduceMax", "ReduceMin", "ReduceL1", "ReduceL2", "ReduceSumSquare", "ReduceLogSumExp", "ReduceProd" };

    /// <summary>Ops that keep a layout when they act on each place alone (given a layout on both sides).</summary>
    public static readonly IReadOnlySet<string> PerPlaceOps = new HashSet<string>(StringComparer.Ordinal)
        { "Transpose", "Reshape", "Flatten", "MatMul", "Gemm", "LayerNormalization", "Concat",
          "ReduceMean", "ReduceSum", "ReduceMax", "ReduceMin", "ReduceL1", "ReduceL2", "ReduceSumSquare", "ReduceLogSumExp", "ReduceProd" };

    /// <summary>Layouts of every tensor whose places are known, keyed by name; the image input is channels-first.</summary>
    public static Dictionary<string, TensorLayout> Infer(GraphProto graph, string imageInput, IReadOnlyDictionary<string, long[]> shapes,
        long[] inputShape)
    {
        ArgumentNullException.ThrowIfNull(graph);
        ArgumentNullException.ThrowIfNull(inputShape);
        shapes = new Dictionary<string, long[]>(shapes, StringComparer.Ordinal) { [imageInput] = inputShape };
        var layouts = new Dictionary<string, TensorLayout>(StringComparer.Ordinal)
        {
            [imageInput] = new(LayerLayout.ChannelsFirst, (int)inputShape[2], (int)inputShape[3]),
        };
        var dependent = new HashSet<string>(StringComparer.Ordinal) { imageInput };
        var initializers = graph.Initializer.ToDictionary(t => t.Name, StringComparer.Ordinal);
        foreach (var node in graph.Node)
        {
            if (!node.Input.Any(dependent.Contains)) continue;
            foreach (var o in node.Output) if (o.Length > 0) dependent.Add(o);
            if (node.Output.Count == 0 || !shapes.TryGetValue(node.Output[0], out var outShape)) continue;
            var layout = Rule(node, outShape, layouts, dependent, shapes, initializers);
            if (layout is not null && Consistent(layout, outShape)) layouts[node.Output[0]] = layout;
        }
        return layouts;
    }

    private static TensorLayout? Rule(NodeProto node, long[] outShape, Dictionary<string, TensorLayout> layouts,
        HashSet<string> dependent, IReadOnlyDictionary<string, long[]> shapes, Dictionary<string, TensorProto> initializers)
    {
        string op = node.OpType;
        // The data input is the first one, except for Concat, where a class token may come first.
        TensorLayout? first = op == "Concat" ? node.Input.Where(layouts.ContainsKey).Select(i => layouts[i]).FirstOrDefault()
            : node.Input.Count > 0 && layouts.TryGetValue(node.Input[0], out var l0) ? l0 : null;
        if (MapOps.Contains(op))
            return first?.Kind == LayerLayout.ChannelsFirst && outShape.Length == 4 ? FromShape(LayerLayout.ChannelsFirst, outShape) : null;
        if (OnnxFieldNodes.ElementwiseOps.Contains(op) || op == "Where")
        {
            // The output keeps the layout of an input of its own shape (the others broadcast: a gate, a mean, a bias).
            foreach (var i in node.Input)
                if (layouts.TryGetValue(i, out var l) && shapes.TryGetValue(i, out var s) && s.SequenceEqual(outShape)) return l;
            return null;
        }
        if (first is null) return null;
        switch (op)
        {
            case "Transpose":
                var perm = Ints(node, "perm");
                return (first.Kind, perm) switch
                {
                    (LayerLayout.ChannelsFirst, [0, 2, 3, 1]) => first with { Kind = LayerLayout.ChannelsLast },
                    (LayerLayout.ChannelsLast, [0, 3, 1, 2]) => first with { Kind = LayerLayout.ChannelsFirst },
                    (LayerLayout.Vector, [0, 2, 1]) => first with { Kind = LayerLayout.Tokens },
                    (LayerLayout.Tokens, [0, 2, 1]) when first.Prefix == 0 => first with { Kind = LayerLayout.Vector },
                    _ => null,
                };
            case "Reshape" or "Flatten":
                var inShape = shapes.TryGetValue(node.Input[0], out var si) ? si : null;
                if (inShape is null) return null;
                return (first.Kind, inShape.Length, outShape.Length) switch
                {
                    // [N,C,H,W] → [N,C,H·W]: flattened map, one step from tokens.
                    (LayerLayout.ChannelsFirst, 4, 3) when outShape[1] == inShape[1] => first with { Kind = LayerLayout.Vector },
                    (LayerLayout.Vector, 3, 4) when outShape[1] == inShape[1] => first with { Kind = LayerLayout.ChannelsFirst },
                    (LayerLayout.ChannelsLast, 4, 3) when outShape[2] == inShape[3] => first with { Kind = LayerLayout.Tokens },
                    (LayerLayout.Tokens, 3, 4) when first.Prefix == 0 && outShape[3] == inShape[2] => first with { Kind = LayerLayout.ChannelsLast },
                    _ => null,
                };
            case "MatMul" or "Gemm":
                // A dense layer applied to the last (channel) axis with weights that do not depend on the image.
                bool constWeight = node.Input.Count > 1 && !dependent.Contains(node.Input[1]);
                return constWeight && first.Kind is LayerLayout.ChannelsLast or LayerLayout.Tokens ? first : null;
            case "LayerNormalization":
                long axis = Int(node, "axis", -1);
                return first.Kind is LayerLayout.ChannelsLast or LayerLayout.Tokens && (axis == -1 || axis == outShape.Length - 1) ? first : null;
            case "Concat":
                return ConcatRule(node, outShape, first, layouts);
        }
        if (ReduceOps.Contains(op))
        {
            long[]? axes = Ints(node, "axes") ?? (node.Input.Count > 1 && initializers.TryGetValue(node.Input[1], out var t) ? Int64s(t) : null);
            if (Int(node, "keepdims", 1) != 1 || axes is not { Length: 1 }) return null;
            long a = axes[0] < 0 ? axes[0] + outShape.Length : axes[0];
            long channelAxis = first.Kind == LayerLayout.ChannelsFirst ? 1 : outShape.Length - 1;
            return a == channelAxis && first.Kind != LayerLayout.Vector ? first : null;
        }
        return null;
    }

    private static TensorLayout? ConcatRule(NodeProto node, long[] outShape, TensorLayout first, Dictionary<string, TensorLayout> layouts)
    {
        long axis = Int(node, "axis", 1);
        if (axis < 0) axis += outShape.Length;
        var known = node.Input.Where(layouts.ContainsKey).Select(i => layouts[i]).ToList();
        if (known.Any(k => k.Kind != first.Kind || k.GridH != first.GridH || k.GridW != first.GridW)) return null;
        return (first.Kind, axis) switch
        {
            (LayerLayout.ChannelsFirst, 1) or (LayerLayout.ChannelsLast, 3) or (LayerLayout.Tokens, 2) => first,
            // Tokens put in front of the patch tokens (class, distillation) are no place on the grid.
            (LayerLayout.Tokens, 1) when known.Count == 1 && outShape[1] - (long)first.GridH * first.GridW is >= 0 and <= 16 =>
                first with { Prefix = (int)(outShape[1] - (long)first.GridH * first.GridW) },
            _ => null,
        };
    }

    private static TensorLayout FromShape(LayerLayout kind, long[] s) =>
        kind == LayerLayout.ChannelsFirst ? new(kind, (int)s[2], (int)s[3]) : new(kind, (int)s[1], (int)s[2]);

    private static bool Consistent(TensorLayout l, long[] s) => l.Kind switch
    {
        LayerLayout.ChannelsFirst => s.Length == 4 && s[2] == l.GridH && s[3] == l.GridW,
        LayerLayout.ChannelsLast => s.Length == 4 && s[1] == l.GridH && s[2] == l.GridW,
        LayerLayout.Tokens => s.Length == 3 && s[1] == l.Prefix + (long)l.GridH * l.GridW,
        LayerLayout.Vector => s.Length == 3 && s[2] == (long)l.GridH * l.GridW,
        _ => false,
    };

    private static long[]? Ints(NodeProto node, string name) =>
        node.Attribute.FirstOrDefault(a => a.Name == name) is { } a && a.Ints.Count > 0 ? a.Ints.ToArray() : null;

    private static long Int(NodeProto node, string name, long fallback) =>
        node.Attribute.FirstOrDefault(a => a.Name == name) is { } a ? a.I : fallback;

    private static long[]? Int64s(TensorProto t) =>
        t.Int64Data.Count > 0 ? t.Int64Data.ToArray()
        : t.RawData.Length % 8 == 0 && t.RawData.Length > 0 ? Enumerable.Range(0, t.RawData.Length / 8).Select(i => BitConverter.ToInt64(t.RawData.Span.Slice(i * 8, 8))).ToArray()
        : null;
}
