using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Imaging;
using AuditSvc.Core.Models;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.Formats.Jpeg;
using SixLabors.ImageSharp.Formats.Png;
using SixLabors.ImageSharp.Metadata.Profiles.Exif;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.Imaging;

/// <summary>
/// What the audit does with unusual images, decided once in <see cref="ImageDecoding"/> and used by intake, the pass,
/// the interventions and the exemplar crops alike (all decode through <see cref="Preprocessor.Load"/>).
/// </summary>
public class ImageDecodingTests
{
    private static string NewDir()
    {
        var d = Path.Combine(Path.GetTempPath(), "auditsvc-img-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(d);
        return d;
    }

    private static Preprocessor Fit(int w, int h) =>
        new(new InputRecipe(w, h, AuditSvc.Core.Models.ResizeMode.Stretch, 1, [0f], [1f], ChannelOrder.Rgb, null));

    /// <summary>Intake's reason for skipping <paramref name="file"/> (row 2, beside a good image), or "accepted".</summary>
    internal static string IntakeReason(string dir, string file)
    {
        using (var ok = new Image<Rgb24>(8, 8, new Rgb24(1, 2, 3))) ok.SaveAsPng(Path.Combine(dir, "ok.png"));
        File.WriteAllText(Path.Combine(dir, "manifest.csv"), $"image,label\nok.png,0\n{file},1\n");
        var t = SetIntake.Read(Path.Combine(dir, "manifest.csv"), ["0", "1"], dir);
        return t.Report.Problems.SingleOrDefault(p => p.Row == 2)?.Reason ?? "accepted";
    }

    [Fact]
    public void Intake_HeaderDeclaringEnormousSize_IsRefusedBeforeDecoding()
    {
        var dir = NewDir();
        File.WriteAllBytes(Path.Combine(dir, "huge.png"), PngDeclaring(20_000, 20_000));
        Assert.Contains("20000×20000 (400000000 pixels), more than the limit of 50000000", IntakeReason(dir, "huge.png"), StringComparison.Ordinal);
        var e = Assert.Throws<InvalidImageContentException>(() => ImageDecoding.Load(Path.Combine(dir, "huge.png")));
        Assert.Contains("more than the limit", e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Intake_JpegCutMidScan_IsReportedTruncated()
    {
        var dir = NewDir();
        var full = Path.Combine(dir, "whole.jpg");
        using (var img = Noise(64, 64)) img.SaveAsJpeg(full, new JpegEncoder { Quality = 90 });
        var bytes = File.ReadAllBytes(full);
        File.WriteAllBytes(Path.Combine(dir, "cut.jpg"), bytes[..(bytes.Length * 6 / 10)]);
        Assert.Equal("accepted", IntakeReason(NewDirWith(full), "whole.jpg"));
        Assert.Contains("truncated JPEG", IntakeReason(dir, "cut.jpg"), StringComparison.Ordinal);
    }

    private static string NewDirWith(string file)
    {
        var d = NewDir();
        File.Copy(file, Path.Combine(d, Path.GetFileName(file)));
        return d;
    }

    [Fact]
    public void Load_TruncatedPng_FailsSoThePassReportsIt()
    {
        var dir = NewDir();
        var full = Path.Combine(dir, "whole.png");
        using (var img = Noise(64, 64)) img.SaveAsPng(full);
        var bytes = File.ReadAllBytes(full);
        var cut = Path.Combine(dir, "cut.png");
        File.WriteAllBytes(cut, bytes[..(bytes.Length / 2)]);
        // The pass catches ImageFormatException (and IOException) per image: reported and skipped, not fatal.
        var e = Assert.ThrowsAny<Exception>(() => { using var _ = ImageDecoding.Load(cut); });
        Assert.True(e is ImageFormatException or IOException, $"{e.GetType().Name} would not be caught per image");
    }

    [Fact]
    public void Load_OnePixel_IsStretchedToTheInput()
    {
        var dir = NewDir();
        var path = Path.Combine(dir, "one.png");
        using (var img = new Image<Rgb24>(1, 1, new Rgb24(10, 200, 30))) img.SaveAsPng(path);
        using var fitted = Fit(8, 8).Load(path);
        Assert.Equal((8, 8), (fitted.Width, fitted.Height));
        Assert.Equal(new Rgb24(10, 200, 30), fitted[7, 7]);
    }

    [Fact]
    public void Load_GreyPng_BecomesEqualRgbChannels()
    {
        var path = Path.Combine(NewDir(), "grey.png");
        using (var img = new Image<L8>(4, 4, new L8(77))) img.SaveAsPng(path, new PngEncoder { ColorType = PngColorType.Grayscale });
        using var rgb = ImageDecoding.Load(path);
        Assert.Equal(new Rgb24(77, 77, 77), rgb[2, 2]);
    }

    [Fact]
    public void Load_SixteenBitPng_IsScaledToEightBits()
    {
        var path = Path.Combine(NewDir(), "deep.png");
        // 16-bit value v maps to round(v / 257) in 8 bits (common practice; 0x8080 / 257 = 128 exactly).
        using (var img = new Image<Rgb48>(4, 4, new Rgb48(0x8080, 0xFFFF, 0x0000))) img.SaveAsPng(path, new PngEncoder { BitDepth = PngBitDepth.Bit16 });
        using var rgb = ImageDecoding.Load(path);
        Assert.Equal(new Rgb24(128, 255, 0), rgb[1, 1]);
    }

    [Fact]
    public void Load_CmykJpeg_IsConvertedToRgb()
    {
        // Fixture: an invented 8×8 flat rgb(200,40,40) written as CMYK JPEG by ImageMagick (`-colorspace CMYK -quality 95`).
        var path = Path.Combine(AppContext.BaseDirectory, "Imaging", "Fixtures", "cmyk-red-8x8.jpg");
        using var rgb = ImageDecoding.Load(path);
        var p = rgb[4, 4];
        // Loose bounds: the CMYK round trip and JPEG quantisation move the colour a little; what matters is that it is
        // read as red, not as inverted or as four channels misread as three.
        Assert.InRange(p.R, 170, 230);
        Assert.InRange(p.G, 10, 80);
        Assert.InRange(p.B, 10, 80);
    }

    [Fact]
    public void Load_AnimatedGif_UsesTheFirstFrameOnly()
    {
        var path = Path.Combine(NewDir(), "anim.gif");
        using (var img = new Image<Rgb24>(4, 4, new Rgb24(255, 0, 0)))
        {
            using var second = new Image<Rgb24>(4, 4, new Rgb24(0, 0, 255));
            img.Frames.AddFrame(second.Frames.RootFrame);
            Assert.Equal(2, img.Frames.Count);
            img.SaveAsGif(path);
        }
        using var rgb = ImageDecoding.Load(path);
        Assert.Equal(1, rgb.Frames.Count);
        Assert.True(rgb[1, 1].R > 200 && rgb[1, 1].B < 50, $"first frame expected, got {rgb[1, 1]}");
    }

    [Fact]
    public void Load_ExifRotated_IsReadAsStoredNotRotated()
    {
        var path = Path.Combine(NewDir(), "rotated.jpg");
        using (var img = new Image<Rgb24>(16, 8, new Rgb24(255, 0, 0)))
        {
            for (int y = 0; y < 8; y++) for (int x = 8; x < 16; x++) img[x, y] = new Rgb24(0, 0, 255);
            img.Metadata.ExifProfile = new ExifProfile();
            img.Metadata.ExifProfile.SetValue(ExifTag.Orientation, (ushort)6); // "rotate 90° clockwise to display"
            img.SaveAsJpeg(path, new JpegEncoder { Quality = 95 });
        }
        Assert.Equal(6, ImageDecoding.Orientation(Image.Identify(path)));
        // Pass and crops both decode through Preprocessor.Load: the stored 16×8 layout, red left and blue right.
        using var fitted = Fit(16, 8).Load(path);
        Assert.Equal((16, 8), (fitted.Width, fitted.Height));
        Assert.True(fitted[2, 4].R > 200 && fitted[13, 4].B > 200);
    }

    private static Image<Rgb24> Noise(int w, int h)
    {
        var rng = new Random(5);
        var img = new Image<Rgb24>(w, h);
        for (int y = 0; y < h; y++) for (int x = 0; x < w; x++) img[x, y] = new Rgb24((byte)rng.Next(256), (byte)rng.Next(256), (byte)rng.Next(256));
        return img;
    }

    /// <summary>A tiny real PNG whose IHDR (with a correct CRC) declares another size: the header lies, the data is small.</summary>
    private static byte[] PngDeclaring(int width, int height)
    {
        using var ms = new MemoryStream();
        using (var img = new Image<Rgb24>(1, 1)) img.SaveAsPng(ms);
        var bytes = ms.ToArray();
        // Signature (8) + length (4) + "IHDR" (4): width at 16, height at 20, CRC over type+data at 29.
        System.Buffers.Binary.BinaryPrimitives.WriteInt32BigEndian(bytes.AsSpan(16), width);
        System.Buffers.Binary.BinaryPrimitives.WriteInt32BigEndian(bytes.AsSpan(20), height);
        System.Buffers.Binary.BinaryPrimitives.WriteUInt32BigEndian(bytes.AsSpan(29), Crc32(bytes.AsSpan(12, 17)));
        return bytes;
    }

    // CRC-32 as PNG defines it (ISO 3309 polynomial, reflected; PNG specification, section 15 "CRC algorithm").
    private static uint Crc32(ReadOnlySpan<byte> data)
    {
        uint c = 0xFFFFFFFF;
        foreach (var b in data)
        {
            c ^= b;
            for (int k = 0; k < 8; k++) c = (c & 1) != 0 ? 0xEDB88320 ^ (c >> 1) : c >> 1;
        }
        return ~c;
    }
}
