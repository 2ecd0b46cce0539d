using System.Security.Cryptography;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using Google.Protobuf;
using Onnx;

namespace AuditSvc.Compute.Tests.Models;

/// <summary>
/// Reading packed float_data as raw_data while parsing (RawWeightTags) gives the model that parsing then packing gives,
/// on every model file the repository has and on hand-encoded tensors of every kind; malformed files fail as before.
/// Wire bytes follow the protobuf encoding guide (protobuf.dev/programming-guides/encoding: tag = field number × 8 +
/// wire type; packed repeated fields and bytes are wire type 2; fixed32 is wire type 5, little-endian).
/// </summary>
public class RawWeightTagsTests
{
    public static TheoryData<string> ModelFiles()
    {
        var data = new TheoryData<string>();
        // bench-models holds ResNet-18 when restore could fetch its package (CI restores it): its weights are float_data.
        foreach (var folder in new[] { "model-fixtures", "demo-models", "scenario-models", "bench-models" })
        {
            string full = Path.Combine(AppContext.BaseDirectory, folder);
            if (folder == "bench-models" && !Directory.Exists(full)) continue;
            foreach (var f in Directory.EnumerateFiles(full, "*.onnx", SearchOption.AllDirectories).Order(StringComparer.Ordinal))
                data.Add(Path.GetRelativePath(AppContext.BaseDirectory, f));
        }
        return data;
    }

    [Theory]
    [MemberData(nameof(ModelFiles))]
    public void ParseHashed_EveryModelFile_EqualsParseThenPackAndHashIsTheFiles(string relative)
    {
        string path = Path.Combine(AppContext.BaseDirectory, relative);
        AssertSameAsParseThenPack(path);
        if (relative.StartsWith("bench-models", StringComparison.Ordinal))
        {
            using var file = File.OpenRead(path);
            Assert.NotEmpty(RawWeightTags.Find(file)!);
        }
    }

    [Fact]
    public void ParseHashed_HandEncodedTensors_EqualsParseThenPack_AndSwapsOnlyLoneFloatPayloads()
    {
        using var dir = new TempDir();
        string path = HandEncoded(dir, out int smallCnnFloats);

        AssertSameAsParseThenPack(path);
        using (var file = File.OpenRead(path))
            Assert.Equal(smallCnnFloats + 2, RawWeightTags.Find(file)!.Length); // SmallCnn's large weights, "packed", "type-after"

        var (retagged, _) = ModelIntake.ParseHashed(path);
        var t = retagged.Graph.Initializer.ToDictionary(x => x.Name);
        Assert.True(t["packed"].FloatData.Count == 0 && t["packed"].RawData.Length == 1024);
        Assert.True(t["type-after"].FloatData.Count == 0 && t["type-after"].RawData.Length == 1028);
        Assert.True(t["empty"].FloatData.Count == 0 && t["empty"].RawData.IsEmpty);
        Assert.Equal([1f, 2f], t["small"].FloatData);
        Assert.Equal([1f, 2f], t["unpacked"].FloatData);
        Assert.Equal(256, t["complex"].FloatData.Count);
        Assert.Equal(257, t["two-chunks"].FloatData.Count);
        Assert.True(t["both"].FloatData.Count == 256 && t["both"].RawData.Length == 4);
        Assert.Equal(256, t["int-typed"].FloatData.Count);
    }

    [Fact]
    public void ParseHashed_TruncatedOrCorruptFiles_FailWithTodaysMessage()
    {
        using var dir = new TempDir();
        byte[] whole = File.ReadAllBytes(HandEncoded(dir, out _));
        var cases = new List<byte[]>();
        for (int n = 1; n < whole.Length; n += Math.Max(1, whole.Length / 97)) cases.Add(whole[..n]);
        cases.Add(whole[..^1]);
        cases.Add([.. whole, 0x3A, 0xFF, 0xFF, 0x03]);          // a graph whose length runs past the end
        cases.Add([.. whole, 0x3A, 0x80]);                      // a truncated varint
        cases.Add([.. whole, 0x3F]);                            // field 7 with wire type 7
        cases.Add([.. whole, 0x3A, 0x08, 0x2A, 0x06, 0x10, 0x01, 0x22, 0x05, 0, 0]); // float_data of 5 bytes, cut short
        byte[] notWhole = [0x10, 0x01, 0x22, .. Varint(1026), .. new byte[1026]];           // 1026 bytes: not whole floats
        byte[] initializer = [0x2A, .. Varint(notWhole.Length), .. notWhole];
        cases.Add([.. whole, 0x3A, .. Varint(initializer.Length), .. initializer]);
        int failed = 0;
        for (int i = 0; i < cases.Count; i++)
        {
            string path = Path.Combine(dir.Path, $"bad-{i}.onnx");
            File.WriteAllBytes(path, cases[i]);
            string? before = Message(() => ModelIntake.ParseHashed(path, retag: false));
            string? after = Message(() => ModelIntake.ParseHashed(path));
            Assert.Equal(before, after);
            if (before is null) AssertSameAsParseThenPack(path);
            else failed++;
        }
        Assert.True(failed >= cases.Count / 2, $"{failed} of {cases.Count} failed");
    }

    [Fact]
    public void Retagged_AnyReadSizes_SwapsExactlyTheGivenFloatDataTags()
    {
        byte[] data = new byte[1000];
        new Random(7).NextBytes(data);
        long[] offsets = [0, 1, 63, 64, 500, 999];
        foreach (long o in offsets) data[o] = 0x22;
        data[700] = 0x22; // not listed: stays
        var expected = (byte[])data.Clone();
        foreach (long o in offsets) expected[o] = 0x4A;
        foreach (int chunk in new[] { 1, 3, 64, 4096 })
        {
            using var stream = new RawWeightTags.Retagged(new MemoryStream(data), offsets);
            var read = new MemoryStream();
            var buffer = new byte[chunk];
            int n;
            while ((n = stream.Read(buffer, 0, chunk)) > 0) read.Write(buffer, 0, n);
            Assert.Equal(expected, read.ToArray());
        }
    }

    private static string? Message(Action parse)
    {
        try
        {
            parse();
            return null;
        }
        catch (AuditInputException e)
        {
            return e.Message;
        }
    }

    private static void AssertSameAsParseThenPack(string path)
    {
        var (plain, plainHash) = ModelIntake.ParseHashed(path, retag: false);
        var (retagged, hash) = ModelIntake.ParseHashed(path);
        RawWeights.Pack(plain.Graph);
        RawWeights.Pack(retagged.Graph);
        Assert.Equal(plain.ToByteArray(), retagged.ToByteArray());
        // The hash is of the file's bytes, not of the swapped ones (SHA-256, FIPS 180-4, as .NET computes it).
        Assert.Equal(Convert.ToHexStringLower(SHA256.HashData(File.ReadAllBytes(path))), hash);
        Assert.Equal(plainHash, hash);
    }

    // SmallCnn (weights as packed float_data, as protobuf writes repeated floats), then a second 'graph' field whose
    // hand-encoded initializers protobuf merges into the first: each kind of tensor encoding the parse may meet.
    private static string HandEncoded(TempDir dir, out int smallCnnFloats)
    {
        var g = TestModels.SmallCnn();
        smallCnnFloats = g.Graph.Initializer.Count(t => t.DataType == 1 && t.FloatData.Count * 4 >= RawWeightTags.MinSwapBytes);
        Assert.InRange(smallCnnFloats, 1, g.Graph.Initializer.Count - 1);
        byte[] one = BitConverter.GetBytes(1f), two = BitConverter.GetBytes(2f), three = BitConverter.GetBytes(3f), four = BitConverter.GetBytes(4f);
        byte[] many = [.. Enumerable.Range(0, 256).SelectMany(i => BitConverter.GetBytes(i * 0.5f - 7f))], more = [.. many, .. one];
        byte[][] tensors =
        [
            Tensor("packed", 1, [0x22, .. Varint(many.Length), .. many]),
            Tensor("type-after", 0, [0x22, .. Varint(more.Length), .. more, 0x10, 0x01]),
            Tensor("empty", 1, [0x22, 0]),
            Tensor("small", 1, [0x22, 8, .. one, .. two]),
            Tensor("unpacked", 1, [0x25, .. one, 0x25, .. two]),
            Tensor("complex", 14, [0x22, .. Varint(many.Length), .. many]),
            Tensor("two-chunks", 1, [0x22, .. Varint(many.Length), .. many, 0x22, 4, .. three]),
            Tensor("both", 1, [0x22, .. Varint(many.Length), .. many, 0x4A, 4, 9, 9, 9, 9]),
            Tensor("int-typed", 6, [0x22, .. Varint(many.Length), .. many]),
        ];
        var graph = new List<byte>();
        foreach (var t in tensors) graph.AddRange([0x2A, .. Varint(t.Length), .. t]);
        byte[] model = [.. g.Model.ToByteArray(), 0x3A, .. Varint(graph.Count), .. graph];
        string path = Path.Combine(dir.Path, "hand.onnx");
        File.WriteAllBytes(path, model);
        return path;
    }

    // name (field 8), data_type (field 2, left out when 0), then the given fields.
    private static byte[] Tensor(string name, byte dataType, byte[] rest)
    {
        byte[] n = System.Text.Encoding.UTF8.GetBytes(name);
        byte[] type = dataType == 0 ? [] : [0x10, dataType];
        return [0x42, (byte)n.Length, .. n, .. type, .. rest];
    }

    private static byte[] Varint(int value)
    {
        var bytes = new List<byte>();
        while (value >= 0x80)
        {
            bytes.Add((byte)(value | 0x80));
            value >>= 7;
        }
        bytes.Add((byte)value);
        return [.. bytes];
    }
}
