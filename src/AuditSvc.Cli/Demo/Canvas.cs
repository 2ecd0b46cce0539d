using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Cli.Demo;

/// <summary>A small float RGB canvas with the few drawing primitives the demo needs (no drawing package here).</summary>
internal sealed class Canvas(int width, int height)
{
    private readonly float[] _px = new float[width * height * 3];

    public int Width { get; } = width;
    public int Height { get; } = height;

    public (float R, float G, float B) Get(int x, int y)
    {
        var i = (y * Width + x) * 3;
        return (_px[i], _px[i + 1], _px[i + 2]);
    }

    public void Set(int x, int y, float r, float g, float b)
    {
        var i = (y * Width + x) * 3;
        _px[i] = r;
        _px[i + 1] = g;
        _px[i + 2] = b;
    }

    /// <summary>Mixes a colour in with weight <paramref name="alpha"/> (0 keeps, 1 replaces).</summary>
    public void Blend(int x, int y, float r, float g, float b, float alpha)
    {
        if ((uint)x >= (uint)Width || (uint)y >= (uint)Height || alpha <= 0) return;
        if (alpha > 1) alpha = 1;
        var i = (y * Width + x) * 3;
        _px[i] += (r - _px[i]) * alpha;
        _px[i + 1] += (g - _px[i + 1]) * alpha;
        _px[i + 2] += (b - _px[i + 2]) * alpha;
    }

    public void Scale(int x, int y, float factor)
    {
        if ((uint)x >= (uint)Width || (uint)y >= (uint)Height) return;
        var i = (y * Width + x) * 3;
        _px[i] *= factor;
        _px[i + 1] *= factor;
        _px[i + 2] *= factor;
    }

    /// <summary>Multiplies every pixel by a gain and adds an offset (scene lighting, camera level).</summary>
    public void Light(float gain, float offset)
    {
        for (var i = 0; i < _px.Length; i++) _px[i] = _px[i] * gain + offset;
    }

    /// <summary>
    /// Visits the pixels of a rotated ellipse with (u, v) in its own unit frame (u²+v² = 1 on the rim) and an
    /// edge coverage 0..1 that softens the outline by about one pixel.
    /// </summary>
    public void ForEllipse(float cx, float cy, float a, float b, float angle, Action<int, int, float, float, float> visit)
    {
        var (sin, cos) = MathF.SinCos(angle);
        var reach = MathF.Max(a, b) + 1;
        int x0 = Math.Max(0, (int)MathF.Floor(cx - reach)), x1 = Math.Min(Width - 1, (int)MathF.Ceiling(cx + reach));
        int y0 = Math.Max(0, (int)MathF.Floor(cy - reach)), y1 = Math.Min(Height - 1, (int)MathF.Ceiling(cy + reach));
        var minAxis = MathF.Min(a, b);
        for (var y = y0; y <= y1; y++)
        {
            for (var x = x0; x <= x1; x++)
            {
                float dx = x + 0.5f - cx, dy = y + 0.5f - cy;
                var u = (dx * cos + dy * sin) / a;
                var v = (-dx * sin + dy * cos) / b;
                var d = MathF.Sqrt(u * u + v * v);
                // Distance to the rim in pixels, roughly, for a one-pixel soft edge.
                var coverage = Math.Clamp((1 - d) * minAxis + 0.5f, 0, 1);
                if (coverage > 0) visit(x, y, u, v, coverage);
            }
        }
    }

    public Image<Rgb24> ToImage()
    {
        var image = new Image<Rgb24>(Width, Height);
        image.ProcessPixelRows(rows =>
        {
            for (var y = 0; y < Height; y++)
            {
                var row = rows.GetRowSpan(y);
                for (var x = 0; x < Width; x++)
                {
                    var i = (y * Width + x) * 3;
                    row[x] = new Rgb24(ToByte(_px[i]), ToByte(_px[i + 1]), ToByte(_px[i + 2]));
                }
            }
        });
        return image;
    }

    private static byte ToByte(float v) => (byte)Math.Clamp((int)MathF.Round(v), 0, 255);
}
