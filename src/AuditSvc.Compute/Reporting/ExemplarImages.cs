using System.Collections.Concurrent;
using AuditSvc.Compute.Imaging;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Models;
using AuditSvc.Core.Reporting;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.Formats.Png;
using SixLabors.ImageSharp.PixelFormats;
using SixLabors.ImageSharp.Processing;

namespace AuditSvc.Compute.Reporting;

/// <summary>
/// Exemplar pictures for the report. Each image is brought to the model's input framing first (the same
/// <see cref="Preprocessor.Fit"/> the activation pass uses) because peak boxes are in input coordinates; the box
/// is then outlined by setting pixels. Results are cached by item and box; an unreadable image gives null.
/// </summary>
public sealed class ExemplarImages(Func<int, string> itemPath, InputRecipe recipe) : IExemplarImages
{
    /// <summary>Long side of a crop, in pixels.</summary>
    public const int CropSize = 96;

    /// <summary>Largest side of a whole-image thumbnail, in pixels.</summary>
    public const int WholeSize = 128;

    /// <summary>Margin around the box on each side, as a share of the box's size.</summary>
    public const double Margin = 0.25;

    /// <summary>The outline's two colours, alternating, so it shows on light, dark and saturated backgrounds.</summary>
    public static readonly Rgb24 OutlineA = new(255, 0, 255), OutlineB = new(255, 235, 0);

    private const int Thickness = 2, Dash = 4;

    private readonly Preprocessor _fit = new(recipe);
    private readonly ConcurrentDictionary<(int Item, BoxDto Box, bool Whole), string?> _cache = new();

    /// <summary>
    /// The standalone report with its pictures: a first rendering lists the pictures it shows (as placeholders), they are
    /// made on every core, and the second rendering takes them from the cache. Each picture decodes its image again, so
    /// one after another they were most of the report's time.
    /// </summary>
    public string RenderReport(AuditResult result)
    {
        var wanted = new Wanted();
        HtmlReport.Render(result, wanted);
        Parallel.ForEach(wanted.Pictures.Distinct(), p =>
        {
            if (p.Whole) Whole(p.Exemplar);
            else Crop(p.Exemplar);
        });
        return HtmlReport.Render(result, this);
    }

    private sealed class Wanted : IExemplarImages
    {
        public ConcurrentQueue<(Exemplar Exemplar, bool Whole)> Pictures { get; } = new();

        public string? Crop(Exemplar e)
        {
            Pictures.Enqueue((e, false));
            return null;
        }

        public string? Whole(Exemplar e)
        {
            Pictures.Enqueue((e, true));
            return null;
        }
    }

    public string? Crop(Exemplar e)
    {
        ArgumentNullException.ThrowIfNull(e);
        return _cache.GetOrAdd((e.Item, e.Box, false), k => Render(k.Item, k.Box, whole: false));
    }

    public string? Whole(Exemplar e)
    {
        ArgumentNullException.ThrowIfNull(e);
        return _cache.GetOrAdd((e.Item, e.Box, true), k => Render(k.Item, k.Box, whole: true));
    }

    /// <summary>The picture as PNG bytes (for a page that links its images), or null when the image cannot be read.</summary>
    public byte[]? Png(int item, BoxDto box, bool whole)
    {
        ArgumentNullException.ThrowIfNull(box);
        Image<Rgb24> image;
        try
        {
            image = _fit.Load(itemPath(item));
        }
        catch (Exception ex) when (ex is IOException or UnauthorizedAccessException or ImageFormatException or NotSupportedException)
        {
            return null;
        }
        using (image)
        {
            using var picture = whole ? Thumbnail(image, box, out var outline) : CropAround(image, box, out outline);
            DrawOutline(picture, outline);
            using var ms = new MemoryStream();
            picture.SaveAsPng(ms, new PngEncoder { ColorType = PngColorType.Rgb, CompressionLevel = PngCompressionLevel.BestCompression });
            return ms.ToArray();
        }
    }

    // The report shows a placeholder for null; intake and the pass already list unreadable files.
    private string? Render(int item, BoxDto box, bool whole) =>
        Png(item, box, whole) is { } png ? "data:image/png;base64," + Convert.ToBase64String(png) : null;

    private static Image<Rgb24> CropAround(Image<Rgb24> image, BoxDto box, out Rectangle outline)
    {
        var b = Clip(new Rectangle(box.X, box.Y, box.Width, box.Height), image.Width, image.Height);
        int mx = (int)Math.Round(Margin * b.Width), my = (int)Math.Round(Margin * b.Height);
        var area = Clip(new Rectangle(b.X - mx, b.Y - my, b.Width + 2 * mx, b.Height + 2 * my), image.Width, image.Height);
        double scale = (double)CropSize / Math.Max(area.Width, area.Height);
        int w = Math.Max(1, (int)Math.Round(area.Width * scale)), h = Math.Max(1, (int)Math.Round(area.Height * scale));
        // Enlarging: nearest neighbour, so every source pixel stays a visible block and nothing is invented.
        var sampler = scale >= 1 ? KnownResamplers.NearestNeighbor : KnownResamplers.Triangle;
        var crop = image.Clone(x => x.Crop(area).Resize(w, h, sampler));
        outline = Scale(new Rectangle(b.X - area.X, b.Y - area.Y, b.Width, b.Height), w / (double)area.Width, h / (double)area.Height, w, h);
        return crop;
    }

    private static Image<Rgb24> Thumbnail(Image<Rgb24> image, BoxDto box, out Rectangle outline)
    {
        var b = Clip(new Rectangle(box.X, box.Y, box.Width, box.Height), image.Width, image.Height);
        double scale = Math.Min(1.0, (double)WholeSize / Math.Max(image.Width, image.Height));
        int w = Math.Max(1, (int)Math.Round(image.Width * scale)), h = Math.Max(1, (int)Math.Round(image.Height * scale));
        var thumb = scale < 1 ? image.Clone(x => x.Resize(w, h, KnownResamplers.Triangle)) : image.Clone();
        outline = Scale(b, w / (double)image.Width, h / (double)image.Height, w, h);
        return thumb;
    }

    private static Rectangle Clip(Rectangle r, int width, int height)
    {
        int x0 = Math.Clamp(r.X, 0, width - 1), y0 = Math.Clamp(r.Y, 0, height - 1);
        int x1 = Math.Clamp(r.X + r.Width, x0 + 1, width), y1 = Math.Clamp(r.Y + r.Height, y0 + 1, height);
        return new Rectangle(x0, y0, x1 - x0, y1 - y0);
    }

    private static Rectangle Scale(Rectangle r, double sx, double sy, int width, int height)
    {
        int x0 = (int)Math.Floor(r.X * sx), y0 = (int)Math.Floor(r.Y * sy);
        int x1 = (int)Math.Ceiling((r.X + r.Width) * sx), y1 = (int)Math.Ceiling((r.Y + r.Height) * sy);
        return Clip(new Rectangle(x0, y0, x1 - x0, y1 - y0), width, height);
    }

    /// <summary>Draws a <see cref="Thickness"/>-pixel outline just inside <paramref name="r"/>, dashed in two colours.</summary>
    internal static void DrawOutline(Image<Rgb24> image, Rectangle r)
    {
        int x0 = r.X, y0 = r.Y, x1 = r.Right - 1, y1 = r.Bottom - 1;
        for (int t = 0; t < Thickness; t++)
        {
            for (int x = x0; x <= x1; x++)
            {
                Set(image, x, y0 + t, x);
                Set(image, x, y1 - t, x);
            }
            for (int y = y0; y <= y1; y++)
            {
                Set(image, x0 + t, y, y);
                Set(image, x1 - t, y, y);
            }
        }
    }

    private static void Set(Image<Rgb24> image, int x, int y, int along)
    {
        if ((uint)x < (uint)image.Width && (uint)y < (uint)image.Height)
            image[x, y] = along / Dash % 2 == 0 ? OutlineA : OutlineB;
    }
}
