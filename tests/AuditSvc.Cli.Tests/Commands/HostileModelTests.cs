using AuditSvc.Cli.Demo;
using Google.Protobuf;
using Onnx;

namespace AuditSvc.Cli.Tests.Commands;

/// <summary>
/// ONNX files a hostile or careless user might send: each is refused with exit 2 and a message naming the file and
/// the field, before ONNX Runtime runs anything at the declared size; none ends in exit 3. Built from the resnet
/// fixture so the rest of the file is a valid model.
/// </summary>
public class HostileModelTests
{
    private static ModelProto Resnet() =>
        ModelProto.Parser.ParseFrom(File.ReadAllBytes(Path.Combine(AppContext.BaseDirectory, "model-fixtures", "resnet.onnx")));

    private static string Save(string dir, string name, ModelProto m)
    {
        var path = Path.Combine(dir, name);
        File.WriteAllBytes(path, m.ToByteArray());
        return path;
    }

    private static ModelProto WithInputDims(long batch, long c, long h, long w)
    {
        var m = Resnet();
        var dims = m.Graph.Input[0].Type.TensorType.Shape.Dim;
        dims.Clear();
        foreach (var d in new[] { batch, c, h, w }) dims.Add(new TensorShapeProto.Types.Dimension { DimValue = d });
        return m;
    }

    public static TheoryData<string, string> Kinds => new()
    {
        { "text", "not a parseable ONNX model" },
        { "random-bytes", "not a parseable ONNX model" },
        { "external-data", "external_data" },
        { "input-4000x4000", "over the limit of 1048576 pixels" },
        { "input-100000x100000", "the limit is 8192" },
        { "dimension-3e9", "declares dimension 2 as 3000000000" },
        { "batch-3e9", "declares dimension 0 as 3000000000" },
        { "channels-3e9", "declares dimension 1 as 3000000000" },
        { "two-inputs", "has 2 inputs that are not initializers" },
        { "over-size-limit", "over the limit of 1073741824 bytes" },
    };

    [Theory]
    [MemberData(nameof(Kinds))]
    public void Inspect_HostileModel_ExitsTwoNamingFileAndField(string kind, string expected)
    {
        var dir = CliProcess.TempDir("hostile");
        string path = Path.Combine(dir, kind + ".onnx");
        switch (kind)
        {
            case "text": File.WriteAllText(path, "image,label\na.png,cat\n"); break;
            case "random-bytes": File.WriteAllBytes(path, Enumerable.Range(0, 4096).Select(i => (byte)(i * 7919 % 251)).ToArray()); break;
            case "external-data":
                var m = Resnet();
                var t = m.Graph.Initializer[0];
                t.RawData = ByteString.Empty;
                t.DataLocation = TensorProto.Types.DataLocation.External;
                t.ExternalData.Add(new StringStringEntryProto { Key = "location", Value = "../../etc/passwd" });
                Save(dir, kind + ".onnx", m);
                break;
            case "input-4000x4000": Save(dir, kind + ".onnx", WithInputDims(1, 3, 4000, 4000)); break;
            case "input-100000x100000": Save(dir, kind + ".onnx", WithInputDims(1, 3, 100_000, 100_000)); break;
            case "dimension-3e9": Save(dir, kind + ".onnx", WithInputDims(1, 3, 3_000_000_000, 64)); break;
            case "batch-3e9": Save(dir, kind + ".onnx", WithInputDims(3_000_000_000, 3, 64, 64)); break;
            case "channels-3e9": Save(dir, kind + ".onnx", WithInputDims(1, 3_000_000_000, 64, 64)); break;
            case "two-inputs":
                var two = Resnet();
                var extra = two.Graph.Input[0].Clone();
                extra.Name = "mask";
                two.Graph.Input.Add(extra);
                Save(dir, kind + ".onnx", two);
                break;
            case "over-size-limit":
                // Sparse: the length is over the limit, the disk holds next to nothing; intake must refuse before reading it.
                using (var f = File.Create(path)) f.SetLength((1L << 30) + 1);
                break;
        }
        var (status, _, stderr) = CliProcess.Run("inspect", "--model", path);
        Assert.True(status == 2, $"{kind}: status {status}: {stderr}");
        Assert.Contains(path, stderr);
        Assert.Contains(expected, stderr);
        Assert.DoesNotContain("   at ", stderr); // no stack trace
    }

    [Fact]
    public void Audit_SymbolicInputAskedAt4000_IsRefusedBeforeTheProbe()
    {
        var (status, _, stderr) = CliProcess.Run("inspect", "--model", Path.Combine(AppContext.BaseDirectory, "model-fixtures", "resnet-dynamic-size.onnx"), "--size", "4000");
        Assert.True(status == 2, stderr);
        Assert.Contains("input size 4000x4000", stderr);
        Assert.Contains("over the limit", stderr);
    }

    [Theory]
    [InlineData(4000L, "over the limit of 1048576 pixels")]
    [InlineData(3_000_000_000L, "declares dimension 2 as 3000000000")]
    public void Audit_AbsurdInputShape_ExitsTwoBeforeAnyImageIsRun(long side, string expected)
    {
        var dir = CliProcess.TempDir("hostile-audit");
        var manifest = DemoSetGenerator.Write(Path.Combine(dir, "set"), new DemoSetOptions(3, 0.9, 1));
        var model = Save(dir, "absurd.onnx", WithInputDims(1, 3, side, side > 10_000 ? 64 : side));
        var (status, _, stderr) = CliProcess.Run("audit", "--model", model, "--data", manifest, "--labels", "sound,spotted,mouldy", "--out", Path.Combine(dir, "out"));
        Assert.True(status == 2, $"status {status}: {stderr}");
        Assert.Contains(model, stderr);
        Assert.Contains(expected, stderr);
        Assert.False(File.Exists(Path.Combine(dir, "out", "audit.json")));
    }
}
