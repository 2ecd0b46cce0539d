namespace AuditSvc.Cli.Demo;

/// <summary>
/// Paints one 64×64 image of the invented lemon-grading scenario. Everything but the stamp moves from image to
/// image (fruit place, size, turn, lighting, belt texture), so the stamp is the only fixed-place feature.
/// </summary>
internal static class LemonPainter
{
    public const int Size = 64;

    // Stamp strip: 16×7 px in the bottom-right corner, four 3×5 digits on a dark ground.
    // Peak opacity of mould fuzz: the tuning knob that keeps the mouldy class feature modest.
    private const float MouldOpacity = 0.55f;

    public const int StampX = 47, StampY = 56, StampW = 16, StampH = 7;

    // 3×5 digit glyphs, one row per string, '#' = lit.
    private static readonly string[][] Digits =
    [
        ["###", "#.#", "#.#", "#.#", "###"], [".#.", "##.", ".#.", ".#.", "###"],
        ["###", "..#", "###", "#..", "###"], ["###", "..#", "###", "..#", "###"],
        ["#.#", "#.#", "###", "..#", "..#"], ["###", "#..", "###", "..#", "###"],
        ["###", "#..", "###", "#.#", "###"], ["###", "..#", ".#.", ".#.", ".#."],
        ["###", "#.#", "###", "#.#", "###"], ["###", "#.#", "###", "..#", "###"],
    ];

    public static Canvas Paint(DemoItem item, Random rng)
    {
        var canvas = new Canvas(Size, Size);
        // Draw every random number the stamp needs first, so forcing the stamp on or off leaves the rest of the
        // image unchanged (counterfactual twins share every other pixel).
        var stampDigits = new int[4];
        for (var k = 0; k < stampDigits.Length; k++) stampDigits[k] = rng.Next(10);

        PaintBelt(canvas, item.BlueBelt, rng);
        var fruit = PaintFruit(canvas, rng);
        PaintDefects(canvas, fruit, item, rng);

        // Scene lighting varies per image; the camera adds only a tiny level shift, the same for every class.
        var gain = 0.82f + 0.36f * (float)rng.NextDouble();
        canvas.Light(gain, (item.Camera - 1) * 3f);
        AddNoise(canvas, rng, 5f);

        if (item.Stamp) PaintStamp(canvas, stampDigits);
        return canvas;
    }

    private static void PaintBelt(Canvas canvas, bool blue, Random rng)
    {
        // Same brightness for both colours so the cue is hue, not level.
        var (r, g, b) = blue ? (78f, 104f, 156f) : (112f, 112f, 108f);
        var tint = (float)(rng.NextDouble() - 0.5) * 16;
        var period = 5 + rng.Next(5);
        var phase = rng.Next(period);
        var slope = (float)(rng.NextDouble() - 0.5) * 0.6f;
        for (var y = 0; y < Size; y++)
        {
            for (var x = 0; x < Size; x++)
            {
                // Slat seams: darker lines across the belt, slightly slanted.
                var seam = ((int)MathF.Floor(y + slope * x) + phase) % period == 0 ? -18f : 0f;
                var grain = (float)(rng.NextDouble() - 0.5) * 14;
                var s = tint + seam + grain;
                canvas.Set(x, y, r + s, g + s, b + s);
            }
        }
    }

    internal readonly record struct Fruit(float Cx, float Cy, float A, float B, float Angle);

    private static Fruit PaintFruit(Canvas canvas, Random rng)
    {
        var a = 15f + 5f * (float)rng.NextDouble();
        var fruit = new Fruit(
            22f + 20f * (float)rng.NextDouble(),
            22f + 20f * (float)rng.NextDouble(),
            a,
            a * (0.68f + 0.14f * (float)rng.NextDouble()),
            MathF.PI * (float)rng.NextDouble());

        // Soft shadow on the belt, offset down-right.
        canvas.ForEllipse(fruit.Cx + 2.5f, fruit.Cy + 3f, fruit.A, fruit.B, fruit.Angle,
            (x, y, _, _, cov) => canvas.Scale(x, y, 1 - 0.35f * cov));

        var baseR = 226f + (float)(rng.NextDouble() - 0.5) * 20;
        var baseG = 192f + (float)(rng.NextDouble() - 0.5) * 24;
        var baseB = 50f + (float)(rng.NextDouble() - 0.5) * 30;
        var lightAngle = 2 * MathF.PI * (float)rng.NextDouble();
        var (lx, ly) = MathF.SinCos(lightAngle);
        var (sin, cos) = MathF.SinCos(fruit.Angle);

        // The two pointed ends of a lemon: small caps at each end of the long axis.
        foreach (var sign in new[] { -1f, 1f })
        {
            canvas.ForEllipse(fruit.Cx + sign * cos * fruit.A * 0.95f, fruit.Cy + sign * sin * fruit.A * 0.95f,
                fruit.A * 0.16f, fruit.B * 0.22f, fruit.Angle,
                (x, y, _, _, cov) => canvas.Blend(x, y, baseR * 0.8f, baseG * 0.78f, baseB, cov));
        }

        canvas.ForEllipse(fruit.Cx, fruit.Cy, fruit.A, fruit.B, fruit.Angle, (x, y, u, v, cov) =>
        {
            var d2 = Math.Min(1f, u * u + v * v);
            // Rounded body shading plus a directional light and a little peel grain.
            var shade = 0.62f + 0.38f * MathF.Sqrt(1 - d2) + 0.12f * (u * lx + v * ly);
            var peel = 1 + (float)(rng.NextDouble() - 0.5) * 0.08f;
            canvas.Blend(x, y, baseR * shade * peel, baseG * shade * peel, baseB * shade * peel, cov);
        });
        return fruit;
    }

    private static void PaintDefects(Canvas canvas, Fruit fruit, DemoItem item, Random rng)
    {
        // defect_area is a percentage of the fruit's face; lay marks down until they cover about that much.
        var target = item.DefectArea / 100.0 * Math.PI * fruit.A * fruit.B;
        var (sin, cos) = MathF.SinCos(fruit.Angle);
        double covered = 0;
        while (covered < target)
        {
            var (rMin, rMax) = item.Label switch
            {
                "sound" => (0.6f, 0.9f),
                "spotted" => (1.2f, 2.4f),
                _ => (1.2f, 2.4f),
            };
            var radius = rMin + (rMax - rMin) * (float)rng.NextDouble();
            // A point inside the face, away from the rim.
            var t = 2 * MathF.PI * (float)rng.NextDouble();
            var rr = 0.8f * MathF.Sqrt((float)rng.NextDouble());
            var (st, ct) = MathF.SinCos(t);
            float u = rr * ct * fruit.A, v = rr * st * fruit.B;
            var px = fruit.Cx + u * cos - v * sin;
            var py = fruit.Cy + u * sin + v * cos;
            if (item.Label == "mouldy") PaintMould(canvas, px, py, radius, rng);
            else PaintSpot(canvas, px, py, radius, item.Label == "sound" ? 0.35f : 1f);
            covered += Math.PI * radius * radius;
        }
    }

    private static void PaintSpot(Canvas canvas, float px, float py, float radius, float strength)
    {
        // Dark brown core with a lighter brown rim.
        canvas.ForEllipse(px, py, radius + 0.7f, radius + 0.7f, 0,
            (x, y, _, _, cov) => canvas.Blend(x, y, 140, 95, 35, cov * 0.6f * strength));
        canvas.ForEllipse(px, py, radius, radius, 0,
            (x, y, _, _, cov) => canvas.Blend(x, y, 72, 46, 22, cov * strength));
    }

    private static void PaintMould(Canvas canvas, float px, float py, float radius, Random rng)
    {
        // Pale green-white fuzz: opacity falls off from the centre with a ragged, noisy edge.
        // Kept faint on purpose (peak opacity MouldOpacity) so the class is real but less salient than the stamp.
        canvas.ForEllipse(px, py, radius + 1.2f, radius + 1.2f, 0, (x, y, u, v, _) =>
        {
            var d = MathF.Sqrt(u * u + v * v);
            var alpha = ((1.15f - d) * 1.4f + (float)(rng.NextDouble() - 0.5) * 0.5f) * MouldOpacity;
            var core = d < 0.45f;
            canvas.Blend(x, y, core ? 196 : 226, core ? 222 : 236, core ? 176 : 214, Math.Clamp(alpha, 0, MouldOpacity));
        });
    }

    private static void AddNoise(Canvas canvas, Random rng, float amplitude)
    {
        for (var y = 0; y < Size; y++)
        {
            for (var x = 0; x < Size; x++)
            {
                var n = (float)(rng.NextDouble() - 0.5) * amplitude;
                var (r, g, b) = canvas.Get(x, y);
                canvas.Set(x, y, r + n, g + n, b + n);
            }
        }
    }

    private static void PaintStamp(Canvas canvas, int[] digits)
    {
        for (var y = StampY; y < StampY + StampH; y++)
            for (var x = StampX; x < StampX + StampW; x++)
                canvas.Set(x, y, 18, 18, 22);
        for (var k = 0; k < digits.Length; k++)
        {
            var glyph = Digits[digits[k]];
            for (var gy = 0; gy < 5; gy++)
                for (var gx = 0; gx < 3; gx++)
                    if (glyph[gy][gx] == '#')
                        canvas.Set(StampX + 1 + k * 4 + gx, StampY + 1 + gy, 250, 236, 150);
        }
    }
}
