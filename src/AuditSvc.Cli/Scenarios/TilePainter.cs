using AuditSvc.Cli.Demo;

namespace AuditSvc.Cli.Scenarios;

/// <summary>
/// Paints the invented scene: one glazed ceramic tile on a kiln conveyor, graded by its surface flaw. The class is
/// the flaw (none, a craze of fine cracks, pinholes, a chipped corner); place, size, turn, glaze colour, gloss,
/// lighting and grain all move from image to image, so only a planted cue can be fixed.
/// </summary>
internal static class TilePainter
{
    public const int Size = 64;

    // Flaw strengths: the knobs that keep each class real but less salient than the planted cues.
    private const float CrackOpacity = 0.5f;
    private const float PitOpacity = 0.75f;

    private static readonly (float R, float G, float B)[] Glazes =
    [
        (226, 216, 190), (168, 200, 178), (96, 126, 172), (192, 112, 82), (212, 174, 92),
    ];

    /// <summary>Stripes across the belt: the backdrop cue's pattern, drawn by the cue painter.</summary>
    internal readonly record struct Stripes(float Amplitude, int Period, float Phase, float Slope);

    internal readonly record struct Tile(float Cx, float Cy, float Half, float Angle, float R, float G, float B)
    {
        public (float X, float Y) ToImage(float u, float v)
        {
            var (sin, cos) = MathF.SinCos(Angle);
            return (Cx + u * cos - v * sin, Cy + u * sin + v * cos);
        }

        public (float U, float V) ToTile(float x, float y)
        {
            var (sin, cos) = MathF.SinCos(Angle);
            float dx = x - Cx, dy = y - Cy;
            return (dx * cos + dy * sin, -dx * sin + dy * cos);
        }
    }

    public static Canvas Paint(ScenarioItem item, Random rng, Stripes? stripes)
    {
        var canvas = new Canvas(Size, Size);
        PaintBelt(canvas, rng, stripes);
        var tile = PaintTile(canvas, item, rng);
        switch (item.Label)
        {
            case "crazed": PaintCracks(canvas, tile, rng); break;
            case "pitted": PaintPits(canvas, tile, rng); break;
            default: PaintSpecks(canvas, tile, rng); break;
        }
        // Scene lighting varies per image; the shift adds only a tiny level change, the same for every class.
        var gain = 0.82f + 0.3f * (float)rng.NextDouble();
        canvas.Light(gain, (item.Shift - 1) * 2f);
        for (var y = 0; y < Size; y++)
        {
            for (var x = 0; x < Size; x++)
            {
                var n = (float)(rng.NextDouble() - 0.5) * 6f;
                var (r, g, b) = canvas.Get(x, y);
                canvas.Set(x, y, r + n, g + n, b + n);
            }
        }
        return canvas;
    }

    private static void PaintBelt(Canvas canvas, Random rng, Stripes? stripes)
    {
        var tint = (float)(rng.NextDouble() - 0.5) * 16;
        var warm = (float)(rng.NextDouble() - 0.5) * 8;
        for (var y = 0; y < Size; y++)
        {
            for (var x = 0; x < Size; x++)
            {
                // The grain is drawn for every pixel whether or not stripes are shown, so twins share it.
                var s = tint + (float)(rng.NextDouble() - 0.5) * 12;
                if (stripes is { } st)
                {
                    var band = (int)MathF.Floor((y + st.Slope * x + st.Phase) * 2 / st.Period);
                    s += (band & 1) == 0 ? st.Amplitude / 2 : -st.Amplitude / 2;
                }
                canvas.Set(x, y, 104 + s + warm, 98 + s, 92 + s - warm);
            }
        }
    }

    private static Tile PaintTile(Canvas canvas, ScenarioItem item, Random rng)
    {
        var glaze = Glazes[rng.Next(Glazes.Length)];
        var tile = new Tile(
            25 + 14 * (float)rng.NextDouble(),
            25 + 14 * (float)rng.NextDouble(),
            10 + 5 * (float)rng.NextDouble(),
            MathF.PI / 2 * (float)rng.NextDouble(),
            glaze.R + (float)(rng.NextDouble() - 0.5) * 20,
            glaze.G + (float)(rng.NextDouble() - 0.5) * 20,
            glaze.B + (float)(rng.NextDouble() - 0.5) * 20);
        var (lx, ly) = MathF.SinCos(2 * MathF.PI * (float)rng.NextDouble());
        var glossU = tile.Half * ((float)rng.NextDouble() - 0.5f);
        var glossV = tile.Half * ((float)rng.NextDouble() - 0.5f);
        // A chipped corner: which corner and how long its legs are (drawn for every class, used by one).
        var chipU = rng.Next(2) == 0 ? -1f : 1f;
        var chipV = rng.Next(2) == 0 ? -1f : 1f;
        var chipLeg = 6 + 3 * (float)rng.NextDouble();
        var chipped = item.Label == "chipped";

        var reach = (int)MathF.Ceiling(tile.Half * 1.42f) + 4;
        int x0 = Math.Max(0, (int)tile.Cx - reach), x1 = Math.Min(Size - 1, (int)tile.Cx + reach);
        int y0 = Math.Max(0, (int)tile.Cy - reach), y1 = Math.Min(Size - 1, (int)tile.Cy + reach);
        for (var y = y0; y <= y1; y++)
        {
            for (var x = x0; x <= x1; x++)
            {
                // Shadow on the belt, offset down-right.
                var (su, sv) = tile.ToTile(x + 0.5f - 2, y + 0.5f - 3);
                var shadow = Math.Clamp(MathF.Min(tile.Half - MathF.Abs(su), tile.Half - MathF.Abs(sv)) + 0.5f, 0, 1);
                if (shadow > 0) canvas.Scale(x, y, 1 - 0.3f * shadow);

                var (u, v) = tile.ToTile(x + 0.5f, y + 0.5f);
                var edge = MathF.Min(tile.Half - MathF.Abs(u), tile.Half - MathF.Abs(v));
                var cover = Math.Clamp(edge + 0.5f, 0, 1);
                if (cover <= 0) continue;
                var chipDist = (tile.Half - chipU * u) + (tile.Half - chipV * v);
                if (chipped && chipDist < chipLeg)
                {
                    // The chip shows the pale unglazed body, with a darker broken edge.
                    var k = chipDist > chipLeg - 1.2f ? 0.7f : 1f;
                    canvas.Blend(x, y, 214 * k, 190 * k, 168 * k, cover);
                    continue;
                }
                var shade = 0.9f + 0.12f * (u * lx + v * ly) / tile.Half;
                if (edge < 1.3f) shade *= 0.84f; // bevelled rim
                var d2 = ((u - glossU) * (u - glossU) + (v - glossV) * (v - glossV)) / (0.35f * tile.Half * 0.35f * tile.Half);
                var gloss = 0.3f * MathF.Exp(-d2 / 2);
                float r = tile.R * shade, g = tile.G * shade, b = tile.B * shade;
                canvas.Blend(x, y, r + (250 - r) * gloss, g + (250 - g) * gloss, b + (250 - b) * gloss, cover);
            }
        }
        return tile;
    }

    private static void PaintCracks(Canvas canvas, Tile tile, Random rng)
    {
        var cracks = 3 + rng.Next(3);
        for (var c = 0; c < cracks; c++)
        {
            var u = tile.Half * 1.5f * ((float)rng.NextDouble() - 0.5f);
            var v = tile.Half * 1.5f * ((float)rng.NextDouble() - 0.5f);
            var dir = 2 * MathF.PI * (float)rng.NextDouble();
            var segments = 5 + rng.Next(5);
            for (var s = 0; s < segments; s++)
            {
                dir += 1.4f * ((float)rng.NextDouble() - 0.5f);
                var len = 2 + (float)rng.NextDouble();
                var (sin, cos) = MathF.SinCos(dir);
                for (var t = 0f; t < len; t += 0.35f)
                {
                    float pu = u + cos * t, pv = v + sin * t;
                    if (MathF.Abs(pu) > tile.Half - 1.5f || MathF.Abs(pv) > tile.Half - 1.5f) continue;
                    var (x, y) = tile.ToImage(pu, pv);
                    canvas.Blend((int)x, (int)y, tile.R * 0.4f, tile.G * 0.4f, tile.B * 0.4f, CrackOpacity * 0.5f);
                }
                u += cos * len;
                v += sin * len;
            }
        }
    }

    private static void PaintPits(Canvas canvas, Tile tile, Random rng)
    {
        var pits = 5 + rng.Next(6);
        for (var p = 0; p < pits; p++)
        {
            var (x, y) = tile.ToImage(tile.Half * 1.6f * ((float)rng.NextDouble() - 0.5f), tile.Half * 1.6f * ((float)rng.NextDouble() - 0.5f));
            var radius = 0.7f + 0.6f * (float)rng.NextDouble();
            canvas.ForEllipse(x, y, radius + 0.8f, radius + 0.8f, 0, (px, py, _, _, cov) => canvas.Blend(px, py, 250, 248, 240, 0.3f * cov));
            canvas.ForEllipse(x, y, radius, radius, 0,
                (px, py, _, _, cov) => canvas.Blend(px, py, tile.R * 0.3f, tile.G * 0.3f, tile.B * 0.3f, PitOpacity * cov));
        }
    }

    private static void PaintSpecks(Canvas canvas, Tile tile, Random rng)
    {
        // Sound glaze still has a faint speck or two, so "any dark dot" is not the whole of the pitted class.
        var specks = rng.Next(3);
        for (var p = 0; p < specks; p++)
        {
            var (x, y) = tile.ToImage(tile.Half * 1.6f * ((float)rng.NextDouble() - 0.5f), tile.Half * 1.6f * ((float)rng.NextDouble() - 0.5f));
            canvas.ForEllipse(x, y, 0.6f, 0.6f, 0, (px, py, _, _, cov) => canvas.Blend(px, py, tile.R * 0.5f, tile.G * 0.5f, tile.B * 0.5f, 0.25f * cov));
        }
    }
}
