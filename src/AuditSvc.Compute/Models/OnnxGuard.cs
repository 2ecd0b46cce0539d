using AuditSvc.Core;
using Google.Protobuf;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>The model's single image input: name and its four dimensions (null where symbolic).</summary>
/// <param name="Batch">Fixed batch size, or null when symbolic.</param>
/// <param name="ChannelsLast">The graph takes [N,H,W,C]; the intake puts a channels-first input in front.</param>
public sealed record ImageInput(string Name, int? Batch, int Channels, int? Height, int? Width, bool ChannelsLast = false);

/// <summary>
/// Refuses ONNX files the service must not run: unparseable bytes, tensors stored outside the file,
/// and inputs other than one float image tensor [N,3,H,W] or [N,1,H,W].
/// </summary>
public static class OnnxGuard
{
    /// <summary>Largest model input the service runs, in pixels (1024×1024): the intake runs the model at this size to
    /// learn its shapes, and every image is brought to it, so a larger declared input is refused up front.</summary>
    public const long MaxInputPixels = 1024 * 1024;

    /// <summary>Largest side of a model input, in pixels.</summary>
    public const long MaxInputSide = 8192;

    /// <summary>Largest ONNX file the intake reads (bytes): protobuf's own limit is 2 GB.</summary>
    public const long MaxModelBytes = 1L << 30;

    /// <summary>Refuses an input size over the limits; <paramref name="subject"/> and <paramref name="field"/> name where it came from.</summary>
    public static void CheckInputSize(string subject, string field, long height, long width)
    {
        if (height > MaxInputSide || width > MaxInputSide || height * width > MaxInputPixels)
            throw new AuditInputException(subject,
                $"input size {width}x{height} ({field}) is over the limit of {MaxInputPixels} pixels (1024x1024) and {MaxInputSide} per side; " +
                "audit at a smaller input size (--size) or export the model with a smaller input");
    }

    private const int FloatType = (int)TensorProto.Types.DataType.Float;

    /// <summary>
    /// Parses the stream as an ONNX model with a graph, reading at most <see cref="MaxModelBytes"/>; the file's bytes
    /// are never held whole beside the parsed model.
    /// </summary>
    public static ModelProto Parse(string path, Stream stream)
    {
        ModelProto model;
        try
        {
            model = ModelProto.Parser.ParseFrom(CodedInputStream.CreateWithLimits(stream, (int)MaxModelBytes, recursionLimit: 100));
        }
        catch (InvalidProtocolBufferException e)
        {
            throw new AuditInputException(path, $"not a parseable ONNX model ({e.Message})", e);
        }
        // Protobuf accepts many byte strings as a message of unknown fields; an ONNX model has a graph.
        if (model.Graph is null || model.Graph.Node.Count == 0 || model.IrVersion <= 0)
            throw new AuditInputException(path, "not a parseable ONNX model (field 'graph' is missing or has no nodes, or 'ir_version' is not set)");
        return model;
    }

    /// <summary>Throws when any tensor anywhere in the model points at external data.</summary>
    public static void RejectExternalData(string path, ModelProto model)
    {
        CheckGraph(path, model.Graph);
        foreach (var t in model.TrainingInfo)
        {
            CheckGraph(path, t.Initialization);
            CheckGraph(path, t.Algorithm);
        }
        foreach (var f in model.Functions)
            foreach (var n in f.Node) CheckNode(path, n);
    }

    private static void CheckGraph(string path, GraphProto? graph)
    {
        if (graph is null) return;
        foreach (var t in graph.Initializer) CheckTensor(path, t, "initializer");
        foreach (var s in graph.SparseInitializer) CheckSparse(path, s, "sparse_initializer");
        foreach (var n in graph.Node) CheckNode(path, n);
    }

    private static void CheckNode(string path, NodeProto node)
    {
        foreach (var a in node.Attribute)
        {
            string where = $"attribute '{a.Name}' of node '{node.Name}' ({node.OpType})";
            if (a.T is not null) CheckTensor(path, a.T, where);
            foreach (var t in a.Tensors) CheckTensor(path, t, where);
            if (a.SparseTensor is not null) CheckSparse(path, a.SparseTensor, where);
            foreach (var s in a.SparseTensors) CheckSparse(path, s, where);
            CheckGraph(path, a.G);
            foreach (var g in a.Graphs) CheckGraph(path, g);
        }
    }

    private static void CheckSparse(string path, SparseTensorProto s, string where)
    {
        if (s.Values is not null) CheckTensor(path, s.Values, where);
        if (s.Indices is not null) CheckTensor(path, s.Indices, where);
    }

    private static void CheckTensor(string path, TensorProto t, string where)
    {
        if (t.DataLocation == TensorProto.Types.DataLocation.External || t.ExternalData.Count > 0)
            throw new AuditInputException(path,
                $"tensor '{t.Name}' in {where} is stored as external data (field 'data_location'/'external_data'); " +
                "the service reads only self-contained model files: re-export with the weights inside the .onnx file");
    }

    /// <summary>Finds the one non-initializer graph input and checks it is a float image tensor.</summary>
    public static ImageInput ImageInputOf(string path, ModelProto model)
    {
        var graph = model.Graph;
        var initializers = graph.Initializer.Select(t => t.Name).Concat(graph.SparseInitializer.Select(s => s.Values?.Name ?? ""))
            .ToHashSet(StringComparer.Ordinal);
        var inputs = graph.Input.Where(i => !initializers.Contains(i.Name)).ToList();
        if (inputs.Count != 1)
            throw new AuditInputException(path,
                $"graph field 'input' has {inputs.Count} inputs that are not initializers ({string.Join(", ", inputs.Select(i => i.Name))}); " +
                "an image classifier takes exactly one image tensor");
        var input = inputs[0];
        var tensor = input.Type?.TensorType
            ?? throw new AuditInputException(path, $"graph input '{input.Name}' is not a tensor (field 'type')");
        if (tensor.ElemType != FloatType)
            throw new AuditInputException(path, $"graph input '{input.Name}' has element type {(TensorProto.Types.DataType)tensor.ElemType}, expected float (field 'elem_type')");
        var dims = tensor.Shape?.Dim;
        if (dims is null || dims.Count != 4)
            throw new AuditInputException(path,
                $"graph input '{input.Name}' has rank {dims?.Count.ToString(System.Globalization.CultureInfo.InvariantCulture) ?? "unknown"}, expected 4 as [N,3,H,W] or [N,1,H,W] (field 'shape')");
        for (int i = 0; i < 4; i++)
            if (dims[i].HasDimValue && (dims[i].DimValue < 0 || dims[i].DimValue > (i == 0 ? int.MaxValue : MaxInputSide)))
                throw new AuditInputException(path,
                    $"graph input '{input.Name}' declares dimension {i} as {dims[i].DimValue} (field 'shape'); the limit is {(i == 0 ? int.MaxValue : MaxInputSide)}");
        long? d1 = Dim(dims[1]), d3 = Dim(dims[3]);
        // [N,H,W,C] as other frameworks export it: the last axis holds 1 or 3 channels and axis 1 does not.
        bool channelsLast = d3 is 1 or 3 && d1 is not (1 or 3);
        long? channels = channelsLast ? d3 : d1;
        if (channels is not (1 or 3))
            throw new AuditInputException(path,
                $"graph input '{input.Name}' has {channels?.ToString(System.Globalization.CultureInfo.InvariantCulture) ?? "a symbolic number of"} channels, expected 3 or 1 as [N,C,H,W] or [N,H,W,C] (field 'shape', dimension 1 or 3)");
        long? h = channelsLast ? d1 : Dim(dims[2]), w = channelsLast ? Dim(dims[2]) : d3;
        if (h is long hh && w is long ww) CheckInputSize(path, $"graph input '{input.Name}', field 'shape'", hh, ww);
        return new ImageInput(input.Name, (int?)Dim(dims[0]), (int)channels.Value, (int?)h, (int?)w, channelsLast);
    }

    private static long? Dim(TensorShapeProto.Types.Dimension d) => d.HasDimValue && d.DimValue > 0 ? d.DimValue : null;
}
