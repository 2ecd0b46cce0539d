using AuditSvc.Core.Models;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;
using SixLabors.ImageSharp.Processing;

namespace AuditSvc.Compute.Imaging;

/// <summary>
/// Decodes an image and writes it into one NCHW slot of an input tensor following the recipe. An image already
/// at the input size is used as it is; otherwise the whole image is scaled (no crop) unless the recipe asks for
/// the shorter-side resize and centre crop.
/// </summary>
public sealed class Preprocessor(InputRecipe recipe)
{
    private readonly float[] _scale = Enumerable.Range(0, 3).Select(c => recipe.PixelScale / 255f / recipe.Std[Math.Min(c, recipe.Std.Length - 1)]).ToArray();
    private readonly float[] _shift = Enumerable.Range(0, 3).Select(c => -recipe.Mean[Math.Min(c, recipe.Mean.Length - 1)] / recipe.Std[Math.Min(c, recipe.Std.Length - 1)]).ToArray();

    public InputRecipe Recipe { get; } = recipe;

    public int Channels { get; init; } = 3;

    public int SlotLength => Channels * Recipe.Height * Recipe.Width;

    /// <summary>Loads the file (see <see cref="ImageDecoding"/>: size checked first, first frame, not rotated) and brings it to the input size (RGB, 8 bits per channel).</summary>
    public Image<Rgb24> Load(string path)
    {
        var image = ImageDecoding.Load(path);
        Fit(image);
        return image;
    }

    /// <summary>Brings a decoded image to the input size in place.</summary>
    public void Fit(Image<Rgb24> image)
    {
        int w = Recipe.Width, h = Recipe.Height;
        if (image.Width == w && image.Height == h) return;
        if (Recipe.Resize == Core.Models.ResizeMode.ShorterSideCenterCrop)
            image.Mutate(x => x.Resize(new ResizeOptions { Size = new Size(w, h), Mode = SixLabors.ImageSharp.Processing.ResizeMode.Crop, Position = AnchorPositionMode.Center, Sampler = KnownResamplers.Triangle }));
        else
            image.Mutate(x => x.Resize(w, h, KnownResamplers.Triangle));
    }

    /// <summary>Writes a fitted image into <paramref name="slot"/> (length <see cref="SlotLength"/>), row by row.</summary>
    public void Write(Image<Rgb24> image, Span<float> slot)
    {
        int w = Recipe.Width, h = Recipe.Height, plane = w * h;
        bool bgr = Recipe.Order == ChannelOrder.Bgr;
        float s0 = _scale[0], s1 = _scale[1], s2 = _scale[2], b0 = _shift[0], b1 = _shift[1], b2 = _shift[2];
        // Small images (the input size) are stored contiguously; otherwise copy once.
        Rgb24[]? rented = null;
        ReadOnlySpan<Rgb24> pixels = image.DangerousTryGetSinglePixelMemory(out var memory)
            ? memory.Span
            : CopyPixels(image, rented = System.Buffers.ArrayPool<Rgb24>.Shared.Rent(plane));
        for (int y = 0; y < h; y++)
        {
            var row = pixels.Slice(y * w, w);
            int o = y * w;
            if (Channels == 1)
            {
                var g = slot.Slice(o, w);
                for (int x = 0; x < w; x++)
                {
                    var p = row[x];
                    g[x] = (0.299f * p.R + 0.587f * p.G + 0.114f * p.B) * s0 + b0;
                }
                continue;
            }
            var r = slot.Slice((bgr ? 2 : 0) * plane + o, w);
            var gg = slot.Slice(plane + o, w);
            var b = slot.Slice((bgr ? 0 : 2) * plane + o, w);
            for (int x = 0; x < w; x++)
            {
                var p = row[x];
                r[x] = p.R * s0 + b0;
                gg[x] = p.G * s1 + b1;
                b[x] = p.B * s2 + b2;
            }
        }
        if (rented is not null) System.Buffers.ArrayPool<Rgb24>.Shared.Return(rented);
    }

    private static ReadOnlySpan<Rgb24> CopyPixels(Image<Rgb24> image, Rgb24[] buffer)
    {
        image.CopyPixelDataTo(buffer.AsSpan(0, image.Width * image.Height));
        return buffer.AsSpan(0, image.Width * image.Height);
    }
}
