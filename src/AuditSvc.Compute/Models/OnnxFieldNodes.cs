using AuditSvc.Core.Models;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>Reduces ONNX nodes to <see cref="FieldNode"/>s for the receptive-field walk.</summary>
public static class OnnxFieldNodes
{
    private static readonly HashSet<string> WindowOps = new(StringComparer.Ordinal)
        { "Conv", "MaxPool", "AveragePool", "LpPool" };

    /// <summary>Ops that act position by position (or on channels only): the field passes through or merges.</summary>
    public static readonly IReadOnlySet<string> ElementwiseOps = new HashSet<string>(StringComparer.Ordinal)
    {
        "Relu", "LeakyRelu", "PRelu", "Sigmoid", "Tanh", "Clip", "HardSigmoid", "HardSwish", "Elu", "Selu", "Celu",
        "Gelu", "Mish", "Softplus", "Softsign", "ThresholdedRelu", "Add", "Sub", "Mul", "Div", "Sum", "Max", "Min",
        "Mean", "BatchNormalization", "InstanceNormalization", "LRN", "Dropout", "Identity", "Cast", "Abs", "Neg",
        "Sqrt", "Exp", "Log", "Pow", "Erf", "Reciprocal",
    };

    /// <summary>
    /// One field node per ONNX node. Only float tensors (those in <paramref name="shapes"/>) and the image
    /// count as inputs, so shape arithmetic (Shape → Gather → Reshape) does not leak into the fields.
    /// </summary>
    /// <param name="layouts">Tensor layouts (<see cref="TensorLayouts.Infer"/>): a transpose, reshape, dense layer, norm or
    /// reduction that keeps a known layout on both sides acts on each place alone, so the field passes through.</param>
    public static List<FieldNode> From(GraphProto graph, string imageInput, IReadOnlyDictionary<string, long[]> shapes,
        IReadOnlyDictionary<string, TensorLayout>? layouts = null)
    {
        ArgumentNullException.ThrowIfNull(graph);
        var initializers = graph.Initializer.ToDictionary(t => t.Name, StringComparer.Ordinal);
        // Constant nodes hold values too (torch exports a Pad's amounts that way).
        foreach (var c in graph.Node.Where(n => n.OpType == "Constant" && n.Output.Count == 1))
            if (c.Attribute.FirstOrDefault(a => a.Name == "value")?.T is { } value) initializers.TryAdd(c.Output[0], value);
        var nodes = new List<FieldNode>();
        foreach (var node in graph.Node)
        {
            var inputs = node.Input.Where(i => i == imageInput || (shapes.ContainsKey(i) && !initializers.ContainsKey(i))).ToArray();
            foreach (var output in node.Output.Where(o => o.Length > 0))
            {
                bool perPlace = layouts is not null && TensorLayouts.PerPlaceOps.Contains(node.OpType)
                    && layouts.ContainsKey(output) && inputs.Any(layouts.ContainsKey);
                nodes.Add(perPlace ? FieldNode.Elementwise(output, inputs) : Reduce(node, output, inputs, initializers, shapes));
            }
        }
        return nodes;
    }

    private static FieldNode Reduce(NodeProto node, string output, string[] inputs,
        Dictionary<string, TensorProto> initializers, IReadOnlyDictionary<string, long[]> shapes)
    {
        var whole = FieldNode.Whole(output, inputs);
        if (node.OpType == "Concat")
        {
            long axis = Int(node, "axis", 1);
            if (axis < 0 && shapes.TryGetValue(output, out var outShape)) axis += outShape.Length;
            return axis == 1 ? new FieldNode(output, inputs, FieldOp.Elementwise, [], [], [], []) : whole; // channel concat
        }
        if (ElementwiseOps.Contains(node.OpType))
            return new FieldNode(output, inputs, FieldOp.Elementwise, [], [], [], []);
        if (node.OpType == "Pad") return PadNode(node, output, inputs, initializers) ?? whole;
        if (!WindowOps.Contains(node.OpType) || node.Input.Count == 0) return whole;

        int[]? kernel = Ints(node, "kernel_shape");
        if (kernel is null && node.OpType == "Conv" && node.Input.Count > 1)
        {
            // Conv may omit kernel_shape: the weight's dims [M, C/group, kH, kW] carry it.
            long[]? w = initializers.TryGetValue(node.Input[1], out var t) ? t.Dims.ToArray()
                : shapes.TryGetValue(node.Input[1], out var s) ? s : null;
            if (w is { Length: 4 }) kernel = [(int)w[2], (int)w[3]];
        }
        if (kernel is not { Length: 2 }) return whole;
        int[] stride = Ints(node, "strides") ?? [1, 1];
        int[] dilation = Ints(node, "dilations") ?? [1, 1];
        int[] pads = Ints(node, "pads") ?? [0, 0, 0, 0];
        if (stride.Length != 2 || dilation.Length != 2 || pads.Length != 4) return whole;
        int[] begin = [pads[0], pads[1]];
        string autoPad = Str(node, "auto_pad") ?? "NOTSET";
        if (autoPad is "SAME_UPPER" or "SAME_LOWER")
        {
            if (!shapes.TryGetValue(node.Input[0], out var inShape) || inShape.Length != 4) return whole;
            for (int a = 0; a < 2; a++)
                begin[a] = ReceptiveFields.SamePadBegin((int)inShape[2 + a], kernel[a], stride[a], dilation[a], autoPad == "SAME_UPPER");
        }
        else if (autoPad == "VALID")
        {
            begin = [0, 0];
        }
        return new FieldNode(output, inputs, FieldOp.Window, kernel, stride, begin, dilation);
    }

    // Pad shifts position 0 by the begin padding: a 1×1 window with that padding.
    private static FieldNode? PadNode(NodeProto node, string output, string[] inputs, Dictionary<string, TensorProto> initializers)
    {
        long[]? pads = Ints(node, "pads")?.Select(i => (long)i).ToArray();
        if (pads is null && node.Input.Count > 1 && initializers.TryGetValue(node.Input[1], out var t))
            pads = t.Int64Data.Count > 0 ? t.Int64Data.ToArray()
                : t.RawData.Length > 0 ? Enumerable.Range(0, t.RawData.Length / 8).Select(i => BitConverter.ToInt64(t.RawData.Span.Slice(i * 8, 8))).ToArray()
                : null;
        if (node.Input.Count > 3 && node.Input[3].Length > 0) return null; // explicit axes: rare, keep conservative
        if (pads is not { Length: 8 }) return null;
        return new FieldNode(output, inputs, FieldOp.Window, [1, 1], [1, 1], [(int)pads[2], (int)pads[3]], [1, 1]);
    }

    private static AttributeProto? Attr(NodeProto node, string name) => node.Attribute.FirstOrDefault(a => a.Name == name);

    private static int[]? Ints(NodeProto node, string name) => Attr(node, name) is { } a && a.Ints.Count > 0
        ? a.Ints.Select(i => checked((int)i)).ToArray() : null;

    private static long Int(NodeProto node, string name, long fallback) => Attr(node, name)?.I ?? fallback;

    private static string? Str(NodeProto node, string name) => Attr(node, name)?.S.ToStringUtf8();
}
