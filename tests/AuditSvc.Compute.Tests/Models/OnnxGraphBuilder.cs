using Google.Protobuf;
using Onnx;

namespace AuditSvc.Compute.Tests.Models;

/// <summary>Builds small runnable ONNX graphs with OnnxSharp's protobuf classes; weights are seeded noise.</summary>
internal sealed class OnnxGraphBuilder
{
    private readonly Random _rng;
    private int _n;

    public OnnxGraphBuilder(int seed = 1)
    {
        _rng = new Random(seed);
        Model = new ModelProto
        {
            IrVersion = 8,
            ProducerName = "AuditSvc tests",
            Graph = new GraphProto { Name = "test" },
        };
        Model.OpsetImport.Add(new OperatorSetIdProto { Domain = "", Version = 13 });
    }

    public ModelProto Model { get; }
    public GraphProto Graph => Model.Graph;

    /// <summary>Adds a float graph input; a null dimension is symbolic.</summary>
    public string Input(string name, params long?[] dims)
    {
        Graph.Input.Add(Info(name, TensorProto.Types.DataType.Float, dims));
        return name;
    }

    public void Output(string name, params long?[] dims) => Graph.Output.Add(Info(name, TensorProto.Types.DataType.Float, dims));

    public static ValueInfoProto Info(string name, TensorProto.Types.DataType type, params long?[] dims)
    {
        var shape = new TensorShapeProto();
        foreach (var d in dims)
            shape.Dim.Add(d is long v ? new TensorShapeProto.Types.Dimension { DimValue = v } : new TensorShapeProto.Types.Dimension { DimParam = "N" });
        return new ValueInfoProto
        {
            Name = name,
            Type = new TypeProto { TensorType = new TypeProto.Types.Tensor { ElemType = (int)type, Shape = shape } },
        };
    }

    public string Weight(string name, float fanIn, params long[] dims)
    {
        var t = new TensorProto { Name = name, DataType = (int)TensorProto.Types.DataType.Float };
        t.Dims.AddRange(dims);
        float scale = MathF.Sqrt(3f / fanIn);
        long count = dims.Aggregate(1L, (a, b) => a * b);
        for (long i = 0; i < count; i++) t.FloatData.Add((float)(_rng.NextDouble() * 2 - 1) * scale);
        Graph.Initializer.Add(t);
        return name;
    }

    public string Ints64(string name, params long[] values)
    {
        var t = new TensorProto { Name = name, DataType = (int)TensorProto.Types.DataType.Int64 };
        t.Dims.Add(values.Length);
        t.Int64Data.AddRange(values);
        Graph.Initializer.Add(t);
        return name;
    }

    public string Node(string op, string[] inputs, params AttributeProto[] attributes)
    {
        string output = $"{op.ToLowerInvariant()}_{_n++}";
        var node = new NodeProto { OpType = op, Name = output };
        node.Input.AddRange(inputs);
        node.Output.Add(output);
        node.Attribute.AddRange(attributes);
        Graph.Node.Add(node);
        return output;
    }

    /// <summary>Conv without kernel_shape (the intake must read the weight's dims), optional auto_pad.</summary>
    public string Conv(string x, int cin, int cout, int k, int stride = 1, int pad = 0, string? autoPad = null, int dilation = 1)
    {
        string w = Weight($"w{_n}", cin * k * k, cout, cin, k, k);
        string b = Weight($"b{_n}", cin * k * k, cout);
        var attrs = new List<AttributeProto> { IntsAttr("strides", stride, stride), IntsAttr("dilations", dilation, dilation) };
        attrs.Add(autoPad is null ? IntsAttr("pads", pad, pad, pad, pad) : StrAttr("auto_pad", autoPad));
        return Node("Conv", [x, w, b], [.. attrs]);
    }

    public string Relu(string x) => Node("Relu", [x]);

    public string MaxPool(string x, int k, int stride, int pad = 0, string? autoPad = null) =>
        Node("MaxPool", [x], IntsAttr("kernel_shape", k, k), IntsAttr("strides", stride, stride),
            autoPad is null ? IntsAttr("pads", pad, pad, pad, pad) : StrAttr("auto_pad", autoPad));

    public string Add(string a, string b) => Node("Add", [a, b]);
    public string GlobalAveragePool(string x) => Node("GlobalAveragePool", [x]);
    public string Flatten(string x) => Node("Flatten", [x], IntAttr("axis", 1));
    public string Softmax(string x) => Node("Softmax", [x], IntAttr("axis", 1));

    public string Gemm(string x, int cin, int cout) =>
        Node("Gemm", [x, Weight($"fc{_n}", cin, cout, cin), Weight($"fcb{_n}", cin, cout)], IntAttr("transB", 1));

    public static AttributeProto IntsAttr(string name, params long[] values)
    {
        var a = new AttributeProto { Name = name, Type = AttributeProto.Types.AttributeType.Ints };
        a.Ints.AddRange(values);
        return a;
    }

    public static AttributeProto IntAttr(string name, long value) =>
        new() { Name = name, Type = AttributeProto.Types.AttributeType.Int, I = value };

    public static AttributeProto StrAttr(string name, string value) =>
        new() { Name = name, Type = AttributeProto.Types.AttributeType.String, S = ByteString.CopyFromUtf8(value) };

    public string Save(string dir, string fileName)
    {
        string path = Path.Combine(dir, fileName);
        File.WriteAllBytes(path, Model.ToByteArray());
        return path;
    }
}
