using System.Text.Json;
using Google.Protobuf;
using Onnx;

namespace AuditSvc.Cli.Tests.Commands;

// Console is process-wide: keep these runs apart from other tests that capture it.
[CollectionDefinition(nameof(ConsoleCapture), DisableParallelization = true)]
public sealed class ConsoleCapture;

[Collection(nameof(ConsoleCapture))]
public class InspectCommandTests
{
    private static (int Status, string Out, string Err) Run(params string[] args)
    {
        // The CLI's top-level Program is internal: run it through its entry point, exit status included.
        var entry = AppDomain.CurrentDomain.Load("auditsvc").EntryPoint!;
        var (oldOut, oldErr) = (Console.Out, Console.Error);
        using var o = new StringWriter();
        using var e = new StringWriter();
        Console.SetOut(o);
        Console.SetError(e);
        try
        {
            var result = entry.Invoke(null, [args]);
            int status = result is Task<int> t ? t.GetAwaiter().GetResult() : (int)result!;
            return (status, o.ToString(), e.ToString());
        }
        finally
        {
            Console.SetOut(oldOut);
            Console.SetError(oldErr);
        }
    }

    private static string TinyModel(string dir)
    {
        static ValueInfoProto Info(string name, params long[] dims)
        {
            var shape = new TensorShapeProto();
            foreach (var d in dims) shape.Dim.Add(new TensorShapeProto.Types.Dimension { DimValue = d });
            return new ValueInfoProto { Name = name, Type = new TypeProto { TensorType = new TypeProto.Types.Tensor { ElemType = 1, Shape = shape } } };
        }
        static TensorProto Weight(string name, params long[] dims)
        {
            var t = new TensorProto { Name = name, DataType = 1 };
            t.Dims.AddRange(dims);
            t.FloatData.AddRange(Enumerable.Range(0, (int)dims.Aggregate(1L, (a, b) => a * b)).Select(i => (i % 7 - 3) / 10f));
            return t;
        }
        static NodeProto Node(string op, string output, params string[] inputs)
        {
            var n = new NodeProto { OpType = op, Name = output };
            n.Input.AddRange(inputs);
            n.Output.Add(output);
            return n;
        }
        var g = new GraphProto { Name = "tiny" };
        g.Input.Add(Info("image", 1, 3, 16, 16));
        g.Initializer.Add(Weight("w", 8, 3, 3, 3));
        g.Initializer.Add(Weight("fc", 2, 8));
        g.Node.Add(Node("Conv", "conv", "image", "w"));
        g.Node.Add(Node("Relu", "relu", "conv"));
        g.Node.Add(Node("GlobalAveragePool", "gap", "relu"));
        g.Node.Add(Node("Flatten", "flat", "gap"));
        var gemm = Node("Gemm", "logits", "flat", "fc");
        gemm.Attribute.Add(new AttributeProto { Name = "transB", Type = AttributeProto.Types.AttributeType.Int, I = 1 });
        g.Node.Add(gemm);
        g.Output.Add(Info("logits", 1, 2));
        var model = new ModelProto { IrVersion = 8, Graph = g };
        model.OpsetImport.Add(new OperatorSetIdProto { Version = 13 });
        string path = Path.Combine(dir, "tiny.onnx");
        File.WriteAllBytes(path, model.ToByteArray());
        return path;
    }

    [Fact]
    public void Inspect_TinyModel_PrintsLayerTableAndJson()
    {
        var dir = Directory.CreateTempSubdirectory("auditsvc-inspect-").FullName;
        try
        {
            string model = TinyModel(dir);
            var (status, text, _) = Run("inspect", "--model", model);
            Assert.Equal(0, status);
            Assert.Contains("relu", text);
            Assert.Contains("8x14x14", text); // 3×3 convolution without padding on 16×16
            Assert.Contains("2 classes", text);

            var (jsonStatus, json, _) = Run("inspect", "--model", model, "--json");
            Assert.Equal(0, jsonStatus);
            using var doc = JsonDocument.Parse(json);
            Assert.Equal(["relu", "flat"], doc.RootElement.GetProperty("read_layers").EnumerateArray().Select(e => e.GetString()));
            var relu = doc.RootElement.GetProperty("layers").EnumerateArray().Single(l => l.GetProperty("name").GetString() == "relu");
            Assert.Equal(3, relu.GetProperty("field").GetProperty("x").GetProperty("size").GetDouble());
            Assert.Equal(1, relu.GetProperty("field").GetProperty("x").GetProperty("offset").GetDouble());
        }
        finally
        {
            Directory.Delete(dir, recursive: true);
        }
    }

    [Fact]
    public void Inspect_UnknownLayer_ExitsTwoNamingLayers()
    {
        var dir = Directory.CreateTempSubdirectory("auditsvc-inspect-").FullName;
        try
        {
            var (status, _, err) = Run("inspect", "--model", TinyModel(dir), "--layers", "nope");
            Assert.Equal(2, status);
            Assert.Contains("--layers", err);
            Assert.Contains("relu", err);
        }
        finally
        {
            Directory.Delete(dir, recursive: true);
        }
    }
}
