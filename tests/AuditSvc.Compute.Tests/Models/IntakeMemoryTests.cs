using System.Buffers.Binary;
using System.Security.Cryptography;
using AuditSvc.Compute.Models;
using Google.Protobuf;
using Onnx;

namespace AuditSvc.Compute.Tests.Models;

/// <summary>The intake's memory savings keep what it computes: weights moved bit for bit, the file's hash, the same runs.</summary>
public class IntakeMemoryTests
{
    [Fact]
    public void Pack_FloatData_BecomesLittleEndianRawDataBitForBit()
    {
        float[] values = [0f, -0f, 1.5f, float.Epsilon, float.MaxValue, float.NegativeInfinity, float.NaN, BitConverter.Int32BitsToSingle(0x7fc00123)];
        var floats = new TensorProto { Name = "w", DataType = (int)TensorProto.Types.DataType.Float };
        floats.Dims.Add(values.Length);
        floats.FloatData.AddRange(values);
        var ints = new TensorProto { Name = "shape", DataType = (int)TensorProto.Types.DataType.Int64 };
        ints.Dims.Add(2);
        ints.Int64Data.AddRange([1L, -1L]);
        var raw = new TensorProto { Name = "r", DataType = (int)TensorProto.Types.DataType.Float, RawData = ByteString.CopyFrom(1, 2, 3, 4) };
        raw.Dims.Add(1);
        var graph = new GraphProto();
        graph.Initializer.AddRange([floats, ints, raw]);

        RawWeights.Pack(graph);

        var packed = graph.Initializer[0];
        Assert.Empty(packed.FloatData);
        Assert.Equal(values.Length * 4, packed.RawData.Length);
        // ONNX stores raw_data little-endian (onnx.proto, TensorProto.raw_data).
        for (int i = 0; i < values.Length; i++)
            Assert.Equal(BitConverter.SingleToInt32Bits(values[i]), BinaryPrimitives.ReadInt32LittleEndian(packed.RawData.Span[(i * 4)..]));
        Assert.Equal([1L, -1L], graph.Initializer[1].Int64Data);
        Assert.Equal(new byte[] { 1, 2, 3, 4 }, graph.Initializer[2].RawData.ToByteArray());
    }

    [Fact]
    public void Load_FloatDataModel_RewrittenWeightsAreRawAndHashIsTheFiles()
    {
        using var dir = new TempDir();
        var path = TestModels.SmallCnn(batch: 1).Save(dir.Path, "cnn.onnx");
        var loaded = ModelIntake.Load(path);

        var rewritten = ModelProto.Parser.ParseFrom(loaded.RewrittenModel);
        var weights = rewritten.Graph.Initializer.Where(t => t.DataType == (int)TensorProto.Types.DataType.Float && t.Dims.Count > 0).ToList();
        Assert.NotEmpty(weights);
        Assert.All(weights, t => Assert.True(t.FloatData.Count == 0 && !t.RawData.IsEmpty, t.Name));
        // The hash is taken while parsing from the stream; it must be the whole file's (SHA-256, FIPS 180-4, as .NET computes it).
        Assert.Equal(Convert.ToHexStringLower(SHA256.HashData(File.ReadAllBytes(path))), loaded.Plan.Sha256);
    }

    [Fact]
    public void RunEach_OneSession_EqualsOneRunPerInput()
    {
        using var dir = new TempDir();
        var loaded = ModelIntake.Load(TestModels.SmallCnn().Save(dir.Path, "cnn.onnx"));
        var inputs = new[] { OrtRunner.Noise([1, 3, 32, 32], 1), OrtRunner.Noise([1, 3, 32, 32], 2) };
        var each = OrtRunner.RunEach(loaded.RewrittenModel, "image", inputs);
        for (int i = 0; i < inputs.Length; i++)
        {
            var alone = OrtRunner.Run(loaded.RewrittenModel, "image", inputs[i]);
            Assert.Equal(alone.Keys.Order(), each[i].Keys.Order());
            foreach (var (name, t) in alone)
            {
                Assert.Equal(t.Shape, each[i][name].Shape);
                Assert.Equal(t.Data, each[i][name].Data);
            }
        }
    }
}
