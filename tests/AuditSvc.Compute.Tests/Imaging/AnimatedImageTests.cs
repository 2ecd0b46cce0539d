using System.Buffers.Binary;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Imaging;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.Formats.Png;
using SixLabors.ImageSharp.Formats.Webp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.Imaging;

/// <summary>
/// Animated images, built here from frames ImageSharp encodes: an animated WebP is recognised from its RIFF chunks
/// before any decoder sees it and skipped with its frame count and canvas; an animated PNG decodes to its default
/// image. Container layouts: the WebP container specification (VP8X, ANIM, ANMF chunks) and the APNG specification
/// (acTL, fcTL, fdAT chunks), both as published by their maintainers (recalled from memory).
/// </summary>
public class AnimatedImageTests
{
    private static string NewDir() => Directory.CreateTempSubdirectory("auditsvc-anim-").FullName;

    /// <summary>The VP8L chunk (header and data) of a still lossless WebP of one colour.</summary>
    private static byte[] Vp8lChunk(int w, int h, Rgb24 colour)
    {
        using var image = new Image<Rgb24>(w, h, colour);
        using var ms = new MemoryStream();
        image.SaveAsWebp(ms, new WebpEncoder { FileFormat = WebpFileFormatType.Lossless });
        var bytes = ms.ToArray();
        Assert.Equal("VP8L"u8.ToArray(), bytes[12..16]);
        return bytes[12..];
    }

    private static void U24(List<byte> b, int v) { b.Add((byte)v); b.Add((byte)(v >> 8)); b.Add((byte)(v >> 16)); }

    private static void Chunk(List<byte> b, string fourCc, IReadOnlyCollection<byte> payload)
    {
        b.AddRange(System.Text.Encoding.ASCII.GetBytes(fourCc));
        var size = new byte[4];
        BinaryPrimitives.WriteUInt32LittleEndian(size, (uint)payload.Count);
        b.AddRange(size);
        b.AddRange(payload);
        if (payload.Count % 2 == 1) b.Add(0);
    }

    /// <summary>An animated WebP of <paramref name="frames"/> frames, each a full-canvas lossless frame.</summary>
    internal static byte[] AnimatedWebpFile(int frames, int w, int h)
    {
        var body = new List<byte>();
        var vp8x = new List<byte> { 0x02, 0, 0, 0 }; // animation flag
        U24(vp8x, w - 1);
        U24(vp8x, h - 1);
        Chunk(body, "VP8X", vp8x);
        Chunk(body, "ANIM", new byte[] { 0, 0, 0, 0, 0, 0 });
        for (int i = 0; i < frames; i++)
        {
            var anmf = new List<byte>();
            U24(anmf, 0); U24(anmf, 0); U24(anmf, w - 1); U24(anmf, h - 1); U24(anmf, 100);
            anmf.Add(0);
            anmf.AddRange(Vp8lChunk(w, h, new Rgb24((byte)(40 * i), 0, 0)));
            Chunk(body, "ANMF", anmf);
        }
        var file = new List<byte>();
        file.AddRange("RIFF"u8.ToArray());
        var size = new byte[4];
        BinaryPrimitives.WriteUInt32LittleEndian(size, (uint)(body.Count + 4));
        file.AddRange(size);
        file.AddRange("WEBP"u8.ToArray());
        file.AddRange(body);
        return file.ToArray();
    }

    private static string IntakeReason(string dir, string file) => ImageDecodingTests.IntakeReason(dir, file);

    [Fact]
    public void ImageSharp_AnimatedWebp_IsNotDecodedAtAll()
    {
        // Pins the library's behaviour this check rests on: ImageSharp 2.1 refuses animated WebP outright. If an
        // upgrade starts decoding every frame, this fails, and a frames × pixels budget is due before decoding.
        var bytes = AnimatedWebpFile(3, 64, 48);
        Assert.ThrowsAny<NotSupportedException>(() => Image.Load<Rgb24>(bytes));
    }

    [Fact]
    public void Intake_AnimatedWebp_IsSkippedNamingFramesAndCanvas()
    {
        var dir = NewDir();
        File.WriteAllBytes(Path.Combine(dir, "moving.webp"), AnimatedWebpFile(3, 64, 48));

        var reason = IntakeReason(dir, "moving.webp");

        Assert.Equal("animated WebP (3 frames on a 64×48 canvas): animated WebP is not decoded; give a still image, such as its first frame", reason);
        var e = Assert.Throws<InvalidImageContentException>(() => ImageDecoding.Load(Path.Combine(dir, "moving.webp")));
        Assert.StartsWith("animated WebP (3 frames", e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Intake_StillWebp_IsAccepted()
    {
        var dir = NewDir();
        using (var still = new Image<Rgb24>(20, 10, new Rgb24(9, 90, 200))) still.SaveAsWebp(Path.Combine(dir, "still.webp"));
        Assert.Equal("accepted", IntakeReason(dir, "still.webp"));
        using var image = ImageDecoding.Load(Path.Combine(dir, "still.webp"));
        Assert.Equal((20, 10), (image.Width, image.Height));
    }

    [Fact]
    public void Problem_CountlessFrameChunks_StopsAtItsBound()
    {
        // 100,000 empty ANMF chunks behind an animation header: the walk stops at its bound and says so.
        var body = new List<byte>();
        var vp8x = new List<byte> { 0x02, 0, 0, 0 };
        U24(vp8x, 99); U24(vp8x, 99);
        Chunk(body, "VP8X", vp8x);
        for (int i = 0; i < 100_000; i++) Chunk(body, "ANMF", Array.Empty<byte>());
        var file = "RIFF"u8.ToArray().Concat(new byte[4]).Concat("WEBP"u8.ToArray()).Concat(body).ToArray();
        using var stream = new MemoryStream(file);

        var reason = AnimatedWebp.Problem(stream);

        Assert.StartsWith($"animated WebP (more than {AnimatedWebp.MaxChunks} frames on a 100×100 canvas)", reason, StringComparison.Ordinal);
        Assert.Equal(0, stream.Position);
    }

    [Fact]
    public void Problem_OtherFormats_AreNotItsBusiness()
    {
        using var png = new MemoryStream();
        using (var image = new Image<Rgb24>(4, 4)) image.SaveAsPng(png);
        png.Position = 0;
        Assert.Null(AnimatedWebp.Problem(png));
        using var truncated = new MemoryStream("RIFF"u8.ToArray());
        Assert.Null(AnimatedWebp.Problem(truncated));
    }

    // --- APNG ---------------------------------------------------------------------------------------------

    private static uint Crc32(ReadOnlySpan<byte> data)
    {
        // CRC-32 as PNG defines it (ISO 3309 polynomial, reflected, 0xEDB88320; common practice).
        uint c = 0xFFFFFFFF;
        foreach (var b in data)
        {
            c ^= b;
            for (int k = 0; k < 8; k++) c = (c & 1) != 0 ? 0xEDB88320 ^ (c >> 1) : c >> 1;
        }
        return ~c;
    }

    private static byte[] PngChunk(string type, byte[] data)
    {
        var chunk = new byte[12 + data.Length];
        BinaryPrimitives.WriteUInt32BigEndian(chunk, (uint)data.Length);
        System.Text.Encoding.ASCII.GetBytes(type).CopyTo(chunk, 4);
        data.CopyTo(chunk, 8);
        BinaryPrimitives.WriteUInt32BigEndian(chunk.AsSpan(8 + data.Length), Crc32(chunk.AsSpan(4, 4 + data.Length)));
        return chunk;
    }

    private static List<(string Type, byte[] Data)> PngChunks(byte[] png)
    {
        var list = new List<(string, byte[])>();
        for (int pos = 8; pos < png.Length;)
        {
            var len = (int)BinaryPrimitives.ReadUInt32BigEndian(png.AsSpan(pos));
            list.Add((System.Text.Encoding.ASCII.GetString(png, pos + 4, 4), png[(pos + 8)..(pos + 8 + len)]));
            pos += 12 + len;
        }
        return list;
    }

    private static byte[] Fctl(uint seq, int w, int h)
    {
        var d = new byte[26];
        BinaryPrimitives.WriteUInt32BigEndian(d, seq);
        BinaryPrimitives.WriteUInt32BigEndian(d.AsSpan(4), (uint)w);
        BinaryPrimitives.WriteUInt32BigEndian(d.AsSpan(8), (uint)h);
        BinaryPrimitives.WriteUInt16BigEndian(d.AsSpan(20), 1); // delay 1/10 s
        BinaryPrimitives.WriteUInt16BigEndian(d.AsSpan(22), 10);
        return d;
    }

    private static byte[] Encode(Rgb24 colour)
    {
        using var image = new Image<Rgb24>(8, 8, colour);
        using var ms = new MemoryStream();
        image.SaveAsPng(ms, new PngEncoder { ColorType = PngColorType.Rgb });
        return ms.ToArray();
    }

    [Fact]
    public void Load_AnimatedPng_GivesItsDefaultImage()
    {
        var red = PngChunks(Encode(new Rgb24(255, 0, 0)));
        var blueData = PngChunks(Encode(new Rgb24(0, 0, 255))).Single(c => c.Type == "IDAT").Data;
        using var apng = new MemoryStream();
        apng.Write([0x89, 0x50, 0x4E, 0x47, 0x0D, 0x0A, 0x1A, 0x0A]);
        foreach (var (type, data) in red)
        {
            if (type == "IDAT")
            {
                var actl = new byte[8];
                BinaryPrimitives.WriteUInt32BigEndian(actl, 2); // two frames, loop forever
                apng.Write(PngChunk("acTL", actl));
                apng.Write(PngChunk("fcTL", Fctl(0, 8, 8)));
                apng.Write(PngChunk(type, data));
                apng.Write(PngChunk("fcTL", Fctl(1, 8, 8)));
                var fdat = new byte[4 + blueData.Length];
                BinaryPrimitives.WriteUInt32BigEndian(fdat, 2);
                blueData.CopyTo(fdat, 4);
                apng.Write(PngChunk("fdAT", fdat));
                continue;
            }
            apng.Write(PngChunk(type, data));
        }
        var dir = NewDir();
        var path = Path.Combine(dir, "moving.png");
        File.WriteAllBytes(path, apng.ToArray());

        Assert.Equal("accepted", IntakeReason(dir, "moving.png"));
        using var image = ImageDecoding.Load(path);
        Assert.Equal((8, 8), (image.Width, image.Height));
        Assert.Equal(new Rgb24(255, 0, 0), image[4, 4]);
    }
}
