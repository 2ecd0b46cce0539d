using SixLabors.ImageSharp;
using SixLabors.ImageSharp.Formats;
using SixLabors.ImageSharp.Formats.Gif;
using SixLabors.ImageSharp.Formats.Tiff;
using SixLabors.ImageSharp.Metadata;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Imaging;

/// <summary>
/// The one way images are decoded (intake's header check, the activation pass, interventions and exemplar crops),
/// so every stage sees the same pixels:
/// <list type="bullet">
/// <item>the header is read first and an image over <see cref="MaxPixels"/> is refused before any pixel is decoded;</item>
/// <item>animated GIF and multi-page TIFF: the first frame only; an animated PNG: its default image (ImageSharp 2.1
/// does not read the animation chunks); an animated WebP is refused with its frame count and canvas, read from its
/// RIFF chunks before any decoder sees it (ImageSharp 2.1 cannot decode animated WebP at all);</item>
/// <item>grey, 16-bit and CMYK images are converted to 8-bit RGB by the decoder;</item>
/// <item>EXIF orientation is not applied: pixels are read as stored, as common training loaders read them
/// (PIL and OpenCV's IMREAD_UNCHANGED do not rotate; common practice), so the audit sees what the model was fed.</item>
/// </list>
/// </summary>
public static class ImageDecoding
{
    /// <summary>Largest image, in pixels (width × height), intake accepts and the pass decodes: 50 megapixels (150 MB as RGB).</summary>
    public const long MaxPixels = 50_000_000;

    /// <summary>ImageSharp's configuration with multi-frame formats decoding their first frame only.</summary>
    public static Configuration Configuration { get; } = Create();

    private static Configuration Create()
    {
        var c = Configuration.Default.Clone();
        c.ImageFormatsManager.SetDecoder(GifFormat.Instance, new GifDecoder { DecodingMode = FrameDecodingMode.First });
        c.ImageFormatsManager.SetDecoder(TiffFormat.Instance, new TiffDecoder { DecodingMode = FrameDecodingMode.First });
        return c;
    }

    /// <summary>The reason an identified image is refused, or null when its size is acceptable.</summary>
    public static string? SizeProblem(IImageInfo info)
    {
        ArgumentNullException.ThrowIfNull(info);
        if (info.Width < 1 || info.Height < 1) return "image has no pixels";
        long pixels = (long)info.Width * info.Height;
        return pixels > MaxPixels ? $"image is {info.Width}×{info.Height} ({pixels} pixels), more than the limit of {MaxPixels}" : null;
    }

    /// <summary>Decodes <paramref name="path"/> to 8-bit RGB after checking its header; too large or unreadable: <see cref="InvalidImageContentException"/> or <see cref="UnknownImageFormatException"/>.</summary>
    public static Image<Rgb24> Load(string path)
    {
        using var stream = new FileStream(path, FileMode.Open, FileAccess.Read, FileShare.Read, 64 * 1024);
        if (AnimatedWebp.Problem(stream) is { } animated) throw new InvalidImageContentException(animated);
        var info = Image.Identify(Configuration, stream) ?? throw new UnknownImageFormatException($"{Path.GetFileName(path)}: unknown image format");
        if (SizeProblem(info) is { } why) throw new InvalidImageContentException(why);
        stream.Position = 0;
        return Image.Load<Rgb24>(Configuration, stream);
    }

    /// <summary>The EXIF orientation tag (1 to 8) when present and not 1, else null; reported, not applied.</summary>
    public static int? Orientation(IImageInfo info)
    {
        ArgumentNullException.ThrowIfNull(info);
        if (info.Metadata.ExifProfile?.GetValue(SixLabors.ImageSharp.Metadata.Profiles.Exif.ExifTag.Orientation) is { } tag && tag.Value is > 1 and <= 8)
            return tag.Value;
        return null;
    }
}
