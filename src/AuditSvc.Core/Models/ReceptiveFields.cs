namespace AuditSvc.Core.Models;

/// <summary>How a node changes the receptive field of its input.</summary>
public enum FieldOp
{
    /// <summary>A sliding window (convolution, pooling, padding): kernel, stride, begin padding, dilation.</summary>
    Window,
    /// <summary>Elementwise, activation, normalisation, addition, concatenation: the field passes through;
    /// with several spatial inputs the fields are merged.</summary>
    Elementwise,
    /// <summary>Global pooling, flattening, dense layers, and anything whose spatial effect is unknown:
    /// every output position sees the whole input.</summary>
    Whole,
}

/// <summary>
/// One node of a graph, reduced to what receptive fields need. Arrays are per spatial axis, [Y, X];
/// they are ignored unless <see cref="Op"/> is <see cref="FieldOp.Window"/>.
/// </summary>
public sealed record FieldNode(
    string Output,
    IReadOnlyList<string> Inputs,
    FieldOp Op,
    int[] Kernel,
    int[] Stride,
    int[] PadBegin,
    int[] Dilation)
{
    /// <summary>A square window with the same kernel, stride, padding and dilation on both axes.</summary>
    public static FieldNode Window(string output, string input, int kernel, int stride = 1, int pad = 0, int dilation = 1) =>
        new(output, [input], FieldOp.Window, [kernel, kernel], [stride, stride], [pad, pad], [dilation, dilation]);

    public static FieldNode Elementwise(string output, params string[] inputs) =>
        new(output, inputs, FieldOp.Elementwise, [], [], [], []);

    public static FieldNode Whole(string output, params string[] inputs) =>
        new(output, inputs, FieldOp.Whole, [], [], [], []);
}

/// <summary>
/// Receptive-field algebra after Araujo, Norris &amp; Sim (2019), "Computing Receptive Fields of
/// Convolutional Neural Networks", Distill. Per axis a layer with kernel k, dilation d, stride s and
/// begin padding p maps (size r, jump j, offset o) to (r + (k_eff − 1)·j, j·s, o + ((k_eff − 1)/2 − p)·j)
/// with k_eff = d·(k − 1) + 1. From the input (1, 1, 0) this gives offset = (r − 1)/2 − P, P the
/// effective padding.
/// </summary>
public static class ReceptiveFields
{
    /// <summary>One axis through one window layer.</summary>
    public static RfAxis Window(RfAxis input, int kernel, int stride, int padBegin, int dilation = 1)
    {
        if (kernel < 1) throw new ArgumentOutOfRangeException(nameof(kernel), kernel, "kernel must be at least 1");
        if (stride < 1) throw new ArgumentOutOfRangeException(nameof(stride), stride, "stride must be at least 1");
        if (dilation < 1) throw new ArgumentOutOfRangeException(nameof(dilation), dilation, "dilation must be at least 1");
        double span = dilation * (kernel - 1);
        return new RfAxis(
            input.Size + span * input.Jump,
            input.Jump * stride,
            input.Offset + (span / 2.0 - padBegin) * input.Jump);
    }

    /// <summary>The field where every position sees the whole input of the given extent.</summary>
    public static RfAxis WholeAxis(int inputExtent) => new(inputExtent, inputExtent, (inputExtent - 1) / 2.0);

    /// <summary>The field where every position sees the whole input image.</summary>
    public static ReceptiveField Whole(int inputHeight, int inputWidth) =>
        new(WholeAxis(inputHeight), WholeAxis(inputWidth)) { Global = true };

    /// <summary>
    /// Merges the fields of parallel paths (residual addition, concatenation): the union of position 0's
    /// windows, which is the largest field when the paths are centred alike. Returns null when the jumps
    /// disagree, because one position then has no single step between neighbours.
    /// </summary>
    public static RfAxis? Merge(IReadOnlyList<RfAxis> paths)
    {
        ArgumentNullException.ThrowIfNull(paths);
        if (paths.Count == 0) throw new ArgumentException("nothing to merge", nameof(paths));
        double jump = paths[0].Jump;
        double left = double.MaxValue, right = double.MinValue;
        foreach (var p in paths)
        {
            if (Math.Abs(p.Jump - jump) > 1e-9) return null;
            left = Math.Min(left, p.Offset - (p.Size - 1) / 2.0);
            right = Math.Max(right, p.Offset + (p.Size - 1) / 2.0);
        }
        return new RfAxis(right - left + 1, jump, (left + right) / 2.0);
    }

    /// <summary>
    /// Begin padding of auto_pad SAME_UPPER / SAME_LOWER (ONNX): total = max((ceil(n/s) − 1)·s + k_eff − n, 0),
    /// SAME_UPPER puts the odd pixel at the end, SAME_LOWER at the beginning.
    /// </summary>
    public static int SamePadBegin(int inputExtent, int kernel, int stride, int dilation, bool upper)
    {
        int keff = dilation * (kernel - 1) + 1;
        int outExtent = (inputExtent + stride - 1) / stride;
        int total = Math.Max((outExtent - 1) * stride + keff - inputExtent, 0);
        return upper ? total / 2 : total - total / 2;
    }

    /// <summary>
    /// Walks nodes given in topological order from the image input and returns the field of every tensor
    /// that depends on the image. Inputs with no field (weights, constants) are ignored; a node none of
    /// whose inputs depends on the image gets no field.
    /// </summary>
    public static IReadOnlyDictionary<string, ReceptiveField> Walk(
        string imageInput, IEnumerable<FieldNode> nodes, int inputHeight, int inputWidth)
    {
        ArgumentNullException.ThrowIfNull(nodes);
        var fields = new Dictionary<string, ReceptiveField>(StringComparer.Ordinal) { [imageInput] = ReceptiveField.Input };
        var whole = Whole(inputHeight, inputWidth);
        foreach (var node in nodes)
        {
            var known = new List<ReceptiveField>();
            foreach (var input in node.Inputs)
                if (fields.TryGetValue(input, out var f)) known.Add(f);
            if (known.Count == 0) continue;
            fields[node.Output] = Apply(node, known, whole);
        }
        return fields;
    }

    /// <summary>
    /// The field of one node's output given the fields of its image-dependent inputs. A node that mixes every
    /// position (<see cref="FieldOp.Whole"/>) sees the whole image. A node that merges a local path with one that has
    /// seen the whole image (a squeeze-excitation gate multiplied in, an attention branch added to its residual
    /// stream) keeps the local path's place and is marked <see cref="ReceptiveField.Global"/>: position i is still
    /// where the local path puts it, which is what a crop can show; the true field is the whole image.
    /// </summary>
    public static ReceptiveField Apply(FieldNode node, IReadOnlyList<ReceptiveField> inputs, ReceptiveField whole)
    {
        ArgumentNullException.ThrowIfNull(node);
        ArgumentNullException.ThrowIfNull(inputs);
        ArgumentNullException.ThrowIfNull(whole);
        if (node.Op == FieldOp.Whole) return whole;
        var local = inputs.Where(f => f != whole).ToList();
        if (local.Count == 0) return whole;
        bool global = local.Count < inputs.Count || local.Any(f => f.Global);
        var merged = local[0];
        if (local.Count > 1)
        {
            var y = Merge(local.Select(f => f.Y).ToArray());
            var x = Merge(local.Select(f => f.X).ToArray());
            if (y is null || x is null) return whole;
            merged = new ReceptiveField(y.Value, x.Value);
        }
        merged = merged with { Global = global };
        if (node.Op == FieldOp.Elementwise) return merged;
        return new ReceptiveField(
            Window(merged.Y, node.Kernel[0], node.Stride[0], node.PadBegin[0], node.Dilation[0]),
            Window(merged.X, node.Kernel[1], node.Stride[1], node.PadBegin[1], node.Dilation[1])) { Global = global };
    }
}
