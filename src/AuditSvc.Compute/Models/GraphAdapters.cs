using AuditSvc.Core.Models;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>
/// Small graph edits that let one engine read every model the same way: a channels-first input in front of a
/// channels-last one, a two-class output for a single-output binary classifier, and channels-first views of
/// channels-last and token layers. Each adds nodes; none changes what the model computes.
/// </summary>
public static class GraphAdapters
{
    /// <summary>Prefix of every tensor and node the intake adds.</summary>
    public const string Prefix = "auditsvc_";

    /// <summary>
    /// Puts a channels-first input [N,C,H,W] in front of a channels-last input [N,H,W,C]: a Transpose feeds the
    /// original input tensor, so the rest of the graph is untouched. Returns the new input's name.
    /// </summary>
    public static string ChannelsFirstInput(ModelProto model, string inputName)
    {
        ArgumentNullException.ThrowIfNull(model);
        var graph = model.Graph;
        var input = graph.Input.First(i => i.Name == inputName);
        string name = Prefix + "nchw_" + inputName;
        var dims = input.Type.TensorType.Shape.Dim;
        var nchw = input.Clone();
        nchw.Name = name;
        var d = nchw.Type.TensorType.Shape.Dim;
        d.Clear();
        d.Add(dims[0].Clone());
        d.Add(dims[3].Clone());
        d.Add(dims[1].Clone());
        d.Add(dims[2].Clone());
        graph.Input[graph.Input.IndexOf(input)] = nchw;
        var t = Node("Transpose", [name], [inputName], Prefix + "to_channels_last");
        t.Attribute.Add(Ints("perm", [0, 2, 3, 1]));
        graph.Node.Insert(0, t);
        return name;
    }

    /// <summary>
    /// Replaces a [N,1] class output by [N,2]: for a sigmoid probability p, [1 − p, p]; for a logit z, [0, z], whose
    /// softmax is [1 − σ(z), σ(z)]. Returns the new output's name.
    /// </summary>
    public static string TwoClassOutput(ModelProto model, string classOutput, bool probability)
    {
        ArgumentNullException.ThrowIfNull(model);
        var graph = model.Graph;
        string one = Prefix + "one", other = Prefix + "other_class", name = Prefix + "two_class";
        if (probability)
        {
            graph.Initializer.Add(FloatScalar(one, 1f));
            graph.Node.Add(Node("Sub", [one, classOutput], [other], Prefix + "complement"));
        }
        else graph.Node.Add(Node("Sub", [classOutput, classOutput], [other], Prefix + "zero_logit"));
        var concat = Node("Concat", [other, classOutput], [name], Prefix + "two_class_concat");
        concat.Attribute.Add(new AttributeProto { Name = "axis", Type = AttributeProto.Types.AttributeType.Int, I = 1 });
        graph.Node.Add(concat);
        var info = graph.Output.First(o => o.Name == classOutput);
        var outInfo = new ValueInfoProto
        {
            Name = name,
            Type = new TypeProto { TensorType = new TypeProto.Types.Tensor { ElemType = (int)TensorProto.Types.DataType.Float, Shape = new TensorShapeProto() } },
        };
        var batch = info.Type?.TensorType?.Shape?.Dim is { Count: > 0 } dims ? dims[0].Clone() : new TensorShapeProto.Types.Dimension { DimValue = 1 };
        outInfo.Type.TensorType.Shape.Dim.Add(batch);
        outInfo.Type.TensorType.Shape.Dim.Add(new TensorShapeProto.Types.Dimension { DimValue = 2 });
        graph.Output[graph.Output.IndexOf(info)] = outInfo;
        return name;
    }

    /// <summary>Adds the nodes that compute <see cref="LayerInfo.ReadName"/> [N,C,H,W] from a channels-last or token layer.</summary>
    public static void AddView(GraphProto graph, LayerInfo layer, long opset)
    {
        ArgumentNullException.ThrowIfNull(graph);
        ArgumentNullException.ThrowIfNull(layer);
        string p = layer.ReadName + "_";
        if (layer.Layout == LayerLayout.ChannelsLast)
        {
            var t = Node("Transpose", [layer.Name], [layer.ReadName], p + "transpose");
            t.Attribute.Add(Ints("perm", [0, 3, 1, 2]));
            graph.Node.Add(t);
            return;
        }
        if (layer.Layout != LayerLayout.Tokens) return;
        string tokens = layer.Name;
        if (layer.PrefixTokens > 0)
        {
            // Drop the class token(s): only patch tokens are places.
            var slice = Node("Slice", opset >= 10 ? [layer.Name, p + "starts", p + "ends", p + "axes"] : [layer.Name], [p + "patches"], p + "slice");
            if (opset >= 10)
            {
                graph.Initializer.Add(Int64s(p + "starts", [layer.PrefixTokens]));
                graph.Initializer.Add(Int64s(p + "ends", [long.MaxValue]));
                graph.Initializer.Add(Int64s(p + "axes", [1]));
            }
            else
            {
                slice.Attribute.Add(Ints("starts", [layer.PrefixTokens]));
                slice.Attribute.Add(Ints("ends", [long.MaxValue]));
                slice.Attribute.Add(Ints("axes", [1]));
            }
            graph.Node.Add(slice);
            tokens = p + "patches";
        }
        var tr = Node("Transpose", [tokens], [p + "channels"], p + "transpose");
        tr.Attribute.Add(Ints("perm", [0, 2, 1]));
        graph.Node.Add(tr);
        graph.Initializer.Add(Int64s(p + "shape", [0, layer.Channels, layer.Height, layer.Width]));
        graph.Node.Add(Node("Reshape", [p + "channels", p + "shape"], [layer.ReadName], p + "reshape"));
    }

    internal static NodeProto Node(string op, string[] inputs, string[] outputs, string name)
    {
        var node = new NodeProto { OpType = op, Name = name };
        node.Input.AddRange(inputs);
        node.Output.AddRange(outputs);
        return node;
    }

    private static AttributeProto Ints(string name, long[] values)
    {
        var a = new AttributeProto { Name = name, Type = AttributeProto.Types.AttributeType.Ints };
        a.Ints.AddRange(values);
        return a;
    }

    private static TensorProto Int64s(string name, long[] values)
    {
        var t = new TensorProto { Name = name, DataType = (int)TensorProto.Types.DataType.Int64 };
        t.Dims.Add(values.Length);
        t.Int64Data.AddRange(values);
        return t;
    }

    private static TensorProto FloatScalar(string name, float value)
    {
        var t = new TensorProto { Name = name, DataType = (int)TensorProto.Types.DataType.Float };
        t.FloatData.Add(value);
        return t;
    }
}
