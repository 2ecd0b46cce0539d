using AuditSvc.Cli.Demo;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.Formats.Jpeg;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Cli.Scenarios;

/// <summary>
/// Draws a scenario's cue over the painted scene. Every random number any cue needs is drawn from the cue's own
/// stream, in the same order, whether or not the cue is shown: twins then share every pixel the cue does not touch.
/// </summary>
internal static class CuePainter
{
    private const int CodeColumns = 16;

    /// <summary>The cue's random parts for one image.</summary>
    internal sealed record Draws(bool[] Code, float JitterR, float JitterG, float JitterB, TilePainter.Stripes Stripes);

    public static Draws Draw(Cue cue, Random rng)
    {
        var code = new bool[CodeColumns];
        for (var k = 0; k < code.Length; k++) code[k] = rng.Next(3) > 0;
        var jr = (float)(rng.NextDouble() - 0.5) * 16;
        var jg = (float)(rng.NextDouble() - 0.5) * 16;
        var jb = (float)(rng.NextDouble() - 0.5) * 16;
        var uPeriod = rng.NextDouble();
        var phase = (float)rng.NextDouble() * 16;
        var slope = (float)(rng.NextDouble() - 0.5) * 0.5f;
        var stripes = cue is BackdropCue b
            ? new TilePainter.Stripes(b.Amplitude, b.PeriodMin + (int)(uPeriod * (b.PeriodMax - b.PeriodMin + 1)), phase, slope)
            : new TilePainter.Stripes(0, 8, phase, slope);
        return new Draws(code, jr, jg, jb, stripes);
    }

    /// <summary>Applies a cue drawn on the canvas (all kinds but recompression, which works on the encoded image).</summary>
    public static void ApplyToCanvas(Canvas canvas, Cue cue, Draws draws)
    {
        switch (cue)
        {
            case StampCue s: PaintStamp(canvas, s, draws.Code); break;
            case BorderCue b: PaintBorder(canvas, b, draws); break;
            case CastCue c: ApplyCast(canvas, c); break;
            case BlurCue g: GaussianBlur(canvas, g.Sigma); break;
        }
    }

    /// <summary>Re-encodes the image as JPEG at the cue's quality and decodes it back.</summary>
    public static Image<Rgb24> Recompress(Image<Rgb24> image, RecompressCue cue)
    {
        using var buffer = new MemoryStream();
        image.Save(buffer, new JpegEncoder { Quality = cue.Quality });
        buffer.Position = 0;
        image.Dispose();
        return Image.Load<Rgb24>(buffer);
    }

    private static void PaintStamp(Canvas canvas, StampCue stamp, bool[] code)
    {
        var (x0, y0) = stamp.Origin(canvas.Width);
        for (var y = 0; y < stamp.Height; y++)
        {
            for (var x = 0; x < stamp.Width; x++)
            {
                // A dark strip with a lot code: bright bars on the inner rows, one bar per inner column.
                var inner = x > 0 && x < stamp.Width - 1 && y > 0 && y < stamp.Height - 1;
                var lit = inner && code[(x - 1) % CodeColumns];
                if (lit) canvas.Set(x0 + x, y0 + y, 238, 230, 186);
                else canvas.Set(x0 + x, y0 + y, 22, 22, 26);
            }
        }
    }

    private static void PaintBorder(Canvas canvas, BorderCue border, Draws draws)
    {
        for (var y = 0; y < canvas.Height; y++)
        {
            for (var x = 0; x < canvas.Width; x++)
            {
                var d = Math.Min(Math.Min(x, y), Math.Min(canvas.Width - 1 - x, canvas.Height - 1 - y));
                if (d < border.Width) canvas.Set(x, y, border.R + draws.JitterR, border.G + draws.JitterG, border.B + draws.JitterB);
            }
        }
    }

    private static void ApplyCast(Canvas canvas, CastCue cast)
    {
        for (var y = 0; y < canvas.Height; y++)
        {
            for (var x = 0; x < canvas.Width; x++)
            {
                var (r, g, b) = canvas.Get(x, y);
                canvas.Set(x, y, r * cast.GainR + cast.ShiftR, g * cast.GainG + cast.ShiftG, b * cast.GainB + cast.ShiftB);
            }
        }
    }

    private static void GaussianBlur(Canvas canvas, float sigma)
    {
        var radius = (int)MathF.Ceiling(3 * sigma);
        var kernel = new float[2 * radius + 1];
        float sum = 0;
        for (var k = -radius; k <= radius; k++) sum += kernel[k + radius] = MathF.Exp(-k * k / (2 * sigma * sigma));
        for (var k = 0; k < kernel.Length; k++) kernel[k] /= sum;
        // Separable: rows then columns, edges clamped.
        Pass(canvas, kernel, radius, horizontal: true);
        Pass(canvas, kernel, radius, horizontal: false);
    }

    private static void Pass(Canvas canvas, float[] kernel, int radius, bool horizontal)
    {
        int w = canvas.Width, h = canvas.Height;
        var copy = new (float R, float G, float B)[w * h];
        for (var y = 0; y < h; y++)
            for (var x = 0; x < w; x++)
                copy[y * w + x] = canvas.Get(x, y);
        for (var y = 0; y < h; y++)
        {
            for (var x = 0; x < w; x++)
            {
                float r = 0, g = 0, b = 0;
                for (var k = -radius; k <= radius; k++)
                {
                    var sx = horizontal ? Math.Clamp(x + k, 0, w - 1) : x;
                    var sy = horizontal ? y : Math.Clamp(y + k, 0, h - 1);
                    var p = copy[sy * w + sx];
                    var wk = kernel[k + radius];
                    r += p.R * wk;
                    g += p.G * wk;
                    b += p.B * wk;
                }
                canvas.Set(x, y, r, g, b);
            }
        }
    }
}
