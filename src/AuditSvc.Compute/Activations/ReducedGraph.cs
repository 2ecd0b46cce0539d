using AuditSvc.Compute.Models;
using AuditSvc.Core.Models;
using Google.Protobuf;
using Onnx;

namespace AuditSvc.Compute.Activations;

/// <summary>
/// Moves the channel maxima into the graph: every 4-D read layer [N,C,H,W] is replaced as an output by its
/// maximum over H×W (float) and the first position holding it (int64), both from one MaxPool over the whole plane
/// with its Indices output (or, before opset 8, from ONNX Runtime's ArgMax and ReduceMax). The activation maps then stay inside the runtime, whose memory planner reuses their
/// buffers as it does for the plain model, instead of being handed out in full for every batch.
/// 2-D layers stay as they are (their value is the score). <see cref="ChannelMax"/> is the reference it is tested against;
/// they agree on finite maps (first index on ties, row by row). MaxPool skips NaN as ChannelMax does; a plane with no
/// number above float's lowest (all NaN or −∞) gets position 0 and a score that is clamped like −∞ when stored
/// (ChannelMax calls an all-NaN plane NaN), which only matters for a model that is already broken.
/// </summary>
public static class ReducedGraph
{
    /// <summary>
    /// A copy of <paramref name="exposed"/> (outputs: class output, then <paramref name="read"/> in order) whose
    /// outputs become: class output, then per read layer either [max, argmax] (4-D) or the layer itself (2-D).
    /// </summary>
    /// <param name="fusePeaks">Maximum and position from one MaxPool (opset 8 and later, plane size known); false:
    /// ArgMax, then GatherElements (opset 11 and later) or ReduceMax. Both give the same values and positions.</param>
    public static byte[] Rewrite(byte[] exposed, IReadOnlyList<LayerInfo> read, bool fusePeaks = true)
    {
        ArgumentNullException.ThrowIfNull(exposed);
        if (Splice.Plan(exposed, read, fusePeaks) is not { } splice)
        {
            using var parsed = new MemoryStream();
            WriteParsed(exposed, read, parsed, fusePeaks);
            return parsed.ToArray();
        }
        // Written into an array of its exact size: one copy of the model, not a stream's buffer and then its copy.
        var bytes = new byte[checked((int)splice.Length)];
        using (var into = new MemoryStream(bytes)) splice.WriteTo(exposed, into);
        return bytes;
    }

    /// <summary>
    /// <see cref="Rewrite"/> written to <paramref name="destination"/>. The weights are not parsed: the exposed model's
    /// bytes are copied through, with its graph outputs left out and the reduction's nodes, initializers and outputs
    /// appended to the graph (protobuf joins repeated fields met in several places), so no copy of the weights is made
    /// on the way.
    /// </summary>
    public static void Write(byte[] exposed, IReadOnlyList<LayerInfo> read, Stream destination, bool fusePeaks = true)
    {
        ArgumentNullException.ThrowIfNull(exposed);
        ArgumentNullException.ThrowIfNull(destination);
        if (Splice.Plan(exposed, read, fusePeaks) is { } splice) splice.WriteTo(exposed, destination);
        else WriteParsed(exposed, read, destination, fusePeaks);
    }

    // Where the exposed model's fields lie, what goes in place of its graph outputs, and the result's length.
    private sealed record Splice(List<WireFields.Field> Top, List<WireFields.Field> Graph, byte[] Tail, long GraphLength)
    {
        private static readonly uint GraphTag = WireFormat.MakeTag(ModelProto.GraphFieldNumber, WireFormat.WireType.LengthDelimited);

        public long Length => Top.Where(f => f.Number != ModelProto.GraphFieldNumber).Sum(f => (long)f.Length)
            + CodedOutputStream.ComputeRawVarint32Size(GraphTag) + CodedOutputStream.ComputeLengthSize((int)GraphLength) + GraphLength;

        // Null when the bytes are not laid out as our own writer lays them out (groups, a graph in pieces).
        public static Splice? Plan(byte[] exposed, IReadOnlyList<LayerInfo> read, bool fusePeaks)
        {
            var top = WireFields.Read(exposed, 0, exposed.Length);
            var graphs = top.Where(f => f.Number == ModelProto.GraphFieldNumber).ToList();
            if (top.Any(f => f.WireType == WireFields.Group) || graphs.Count != 1 || graphs[0].WireType != WireFields.LengthDelimited) return null;
            var inGraph = WireFields.Read(exposed, graphs[0].ValueStart, graphs[0].ValueLength);
            if (inGraph.Any(f => f.WireType == WireFields.Group)) return null;
            var opsets = top.Where(f => f.Number == ModelProto.OpsetImportFieldNumber)
                .Select(f => OperatorSetIdProto.Parser.ParseFrom(exposed, f.ValueStart, f.ValueLength));
            var outputs = inGraph.Where(f => f.Number == GraphProto.OutputFieldNumber).ToList();
            var tail = Additions(outputs.Select(f => ValueInfoProto.Parser.ParseFrom(exposed, f.ValueStart, f.ValueLength)).ToList(),
                Opset(opsets), read, fusePeaks).ToByteArray();
            long length = (long)graphs[0].ValueLength - outputs.Sum(f => (long)f.Length) + tail.Length;
            if (length > int.MaxValue) throw new InvalidDataException($"the rewritten graph would be {length} bytes");
            return new Splice(top, inGraph, tail, length);
        }

        public void WriteTo(byte[] exposed, Stream destination)
        {
            foreach (var field in Top)
            {
                if (field.Number != ModelProto.GraphFieldNumber)
                {
                    destination.Write(exposed, field.Start, field.Length);
                    continue;
                }
                WireFields.WriteVarint(destination, GraphTag);
                WireFields.WriteVarint(destination, (ulong)GraphLength);
                foreach (var g in Graph)
                    if (g.Number != GraphProto.OutputFieldNumber) destination.Write(exposed, g.Start, g.Length);
                destination.Write(Tail);
            }
        }
    }

    internal static void WriteParsed(byte[] exposed, IReadOnlyList<LayerInfo> read, Stream destination, bool fusePeaks)
    {
        var model = ModelProto.Parser.ParseFrom(exposed);
        var add = Additions(model.Graph.Output.ToList(), Opset(model.OpsetImport), read, fusePeaks);
        model.Graph.Output.Clear();
        model.Graph.MergeFrom(add);
        model.WriteTo(destination);
    }

    private static long Opset(IEnumerable<OperatorSetIdProto> imports) =>
        imports.Where(o => o.Domain is "" or "ai.onnx").Select(o => o.Version).DefaultIfEmpty(13).Max();

    // What the reduction adds to the graph: its nodes and initializers, and the graph's whole new output list.
    private static GraphProto Additions(IReadOnlyList<ValueInfoProto> outputs, long opset, IReadOnlyList<LayerInfo> read, bool fusePeaks)
    {
        var graph = new GraphProto();
        graph.Output.Add(outputs[0]);
        for (int l = 0; l < read.Count; l++)
        {
            var layer = read[l];
            if (layer.Rank != 4)
            {
                graph.Output.Add(outputs[l + 1]);
                continue;
            }
            string p = $"auditsvc_reduce_{l}_", max = p + "max", arg = p + "argmax";
            if (fusePeaks && opset >= 8 && layer.Height > 0 && layer.Width > 0)
            {
                // One reduction for both: MaxPool over the whole plane with its Indices output reads each map once
                // (ArgMax then GatherElements or ReduceMax read it again). Indices are flattened over [N, C, H, W];
                // LayerReduce.FromGraph makes them per plane, and knows them by their rank-4 shape.
                var pool = Node("MaxPool", [layer.ReadName], [max, arg], p + "maxpool");
                pool.Attribute.Add(IntAttr("kernel_shape", [layer.Height, layer.Width]));
                graph.Node.Add(pool);
                graph.Output.Add(Info(max, TensorProto.Types.DataType.Float, layer.Channels, 1, 1));
                graph.Output.Add(Info(arg, TensorProto.Types.DataType.Int64, layer.Channels, 1, 1));
                continue;
            }
            string flat = p + "flat", shape = p + "shape";
            graph.Initializer.Add(Int64Tensor(shape, [0, layer.Channels, -1]));
            graph.Node.Add(Node("Reshape", [layer.ReadName, shape], [flat], p + "reshape"));
            var argMax = Node("ArgMax", [flat], [arg], p + "argmax_node");
            argMax.Attribute.Add(IntAttr("axis", [2]));
            argMax.Attribute.Add(IntAttr("keepdims", [1]));
            graph.Node.Add(argMax);
            if (opset >= 11)
            {
                // The value at the arg-max is the maximum: gather N×C values instead of reading the maps twice.
                var gather = Node("GatherElements", [flat, arg], [max], p + "gather");
                gather.Attribute.Add(IntAttr("axis", [2]));
                graph.Node.Add(gather);
            }
            else
            {
                var reduce = Node("ReduceMax", opset >= 18 ? [flat, p + "axes"] : [flat], [max], p + "reducemax");
                if (opset >= 18) graph.Initializer.Add(Int64Tensor(p + "axes", [2]));
                else reduce.Attribute.Add(IntAttr("axes", [2]));
                reduce.Attribute.Add(IntAttr("keepdims", [1]));
                graph.Node.Add(reduce);
            }
            graph.Output.Add(Info(max, TensorProto.Types.DataType.Float, layer.Channels, 1));
            graph.Output.Add(Info(arg, TensorProto.Types.DataType.Int64, layer.Channels, 1));
        }
        return graph;
    }

    /// <summary>The output names of the rewritten graph after the class output, in order.</summary>
    public static IReadOnlyList<string> OutputNames(IReadOnlyList<LayerInfo> read) =>
        read.SelectMany((layer, l) => layer.Rank == 4
            ? new[] { $"auditsvc_reduce_{l}_max", $"auditsvc_reduce_{l}_argmax" }
            : [layer.ReadName]).ToList();

    private static NodeProto Node(string op, string[] inputs, string[] outputs, string name)
    {
        var node = new NodeProto { OpType = op, Name = name };
        node.Input.AddRange(inputs);
        node.Output.AddRange(outputs);
        return node;
    }

    private static AttributeProto IntAttr(string name, long[] values)
    {
        var a = new AttributeProto { Name = name };
        if (name is "axes" or "kernel_shape") { a.Type = AttributeProto.Types.AttributeType.Ints; a.Ints.AddRange(values); }
        else { a.Type = AttributeProto.Types.AttributeType.Int; a.I = values[0]; }
        return a;
    }

    private static TensorProto Int64Tensor(string name, long[] values)
    {
        var t = new TensorProto { Name = name, DataType = (int)TensorProto.Types.DataType.Int64 };
        t.Dims.Add(values.Length);
        t.Int64Data.AddRange(values);
        return t;
    }

    private static ValueInfoProto Info(string name, TensorProto.Types.DataType type, int channels, params int[] ones)
    {
        var shape = new TensorShapeProto();
        shape.Dim.Add(new TensorShapeProto.Types.Dimension { DimParam = "N" });
        shape.Dim.Add(new TensorShapeProto.Types.Dimension { DimValue = channels });
        foreach (var one in ones) shape.Dim.Add(new TensorShapeProto.Types.Dimension { DimValue = one });
        return new ValueInfoProto
        {
            Name = name,
            Type = new TypeProto { TensorType = new TypeProto.Types.Tensor { ElemType = (int)type, Shape = shape } },
        };
    }
}
