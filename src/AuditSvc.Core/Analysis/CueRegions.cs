using AuditSvc.Core.Models;

namespace AuditSvc.Core.Analysis;

/// <summary>
/// Where a cue sits in the input, read from the pixels: the label-stratified standardised difference between images
/// with and without the value, per pixel at the input size. <see cref="Mask"/> marks the region's pixels (H·W,
/// row-major); <see cref="Map"/> is the difference map pooled to at most <see cref="CueRegions.MapSide"/> cells a
/// side, 0..100 of its peak, for the report.
/// </summary>
/// <param name="Kind"><c>local</c> (compact: patch interventions), <c>global</c> (over the local share) or <c>none</c> (no pixel differs).</param>
public sealed record CueRegion(
    string Kind,
    Box? Box,
    double Share,
    double Peak,
    double Threshold,
    int ImagesWith,
    int ImagesWithout,
    int MapWidth,
    int MapHeight,
    int[] Map,
    bool[] Mask)
{
    public bool IsLocal => Kind == CueRegions.Local;
}

/// <summary>Finds a cue's region from <see cref="PixelGroups"/> (DESIGN.md, behavioural evidence).</summary>
public static class CueRegions
{
    public const string Local = "local";
    public const string Global = "global";
    public const string None = "none";

    /// <summary>A cue whose differing pixels cover over this share of the image is not local: no patch is moved (DESIGN: about a quarter).</summary>
    public const double MaxLocalShare = 0.25;

    /// <summary>
    /// A global region must cover at least this share of the image to count as image-wide (a colour cast, a belt or
    /// backdrop colour) and get the colour transfer; a frame or a backdrop band between the local and image-wide shares
    /// changes more than colour statistics, so moving only the statistics would not be the cue: it gets no intervention.
    /// </summary>
    public const double MinImageWideShare = 0.6;

    /// <summary>Smallest standardised difference that counts (Cohen's "medium" effect, 0.5; common practice).</summary>
    public const double MinEffect = 0.5;

    /// <summary>
    /// Noise level a pixel must clear, in standard errors of the pooled difference. The largest of ~10⁵ null pixel
    /// differences sits near 5 standard errors; 6 keeps a set whose pixels do not differ from showing a region.
    /// </summary>
    public const double NoiseMultiple = 6;

    /// <summary>Images a label needs on each side to enter the map: smaller groups make the spread estimate noisy.</summary>
    public const int MinPerSide = 8;

    public const int MapSide = 32;

    /// <summary>Spread floor, in 8-bit levels: flat pixels (a painted border) must not divide by zero.</summary>
    private const double SpreadFloor = 2;

    public static CueRegion Find(PixelGroups groups)
    {
        ArgumentNullException.ThrowIfNull(groups);
        int h = groups.Height, w = groups.Width, len = h * w * 3;
        var d = new double[len];
        double wSum = 0;
        int with = 0, without = 0;
        foreach (var (_, sides) in groups.ByLabel)
        {
            var (s0, s1) = (sides[0], sides[1]);
            if (s0.Count < MinPerSide || s1.Count < MinPerSide) continue;
            double n0 = s0.Count, n1 = s1.Count, wk = n0 * n1 / (n0 + n1);
            wSum += wk;
            with += s1.Count;
            without += s0.Count;
            for (int i = 0; i < len; i++)
            {
                double m0 = s0.Sum[i] / n0, m1 = s1.Sum[i] / n1;
                double v0 = Math.Max(0, (s0.SumSq[i] - n0 * m0 * m0) / (n0 - 1));
                double v1 = Math.Max(0, (s1.SumSq[i] - n1 * m1 * m1) / (n1 - 1));
                d[i] += wk * (m1 - m0) / Math.Sqrt((v0 + v1) / 2 + SpreadFloor * SpreadFloor);
            }
        }
        var strength = new double[h * w];
        if (wSum > 0)
            for (int p = 0; p < strength.Length; p++)
                strength[p] = Math.Max(Math.Abs(d[3 * p]), Math.Max(Math.Abs(d[3 * p + 1]), Math.Abs(d[3 * p + 2]))) / wSum;
        // The pooled difference has standard error 1/sqrt(Σw) under no difference (each label's d has variance 1/w).
        double threshold = wSum > 0 ? Math.Max(MinEffect, NoiseMultiple / Math.Sqrt(wSum)) : double.PositiveInfinity;
        double peak = strength.Length == 0 ? 0 : strength.Max();
        var (mapW, mapH, map) = Pool(strength, h, w, peak);
        var mask = Region(strength, h, w, threshold);
        int count = mask.Count(b => b);
        if (count == 0)
            return new CueRegion(None, null, 0, peak, threshold, with, without, mapW, mapH, map, mask);
        // The share that decides local or global counts the pixels that differ, not the margin around them: a 4-pixel
        // frame is a thin ring whatever margin the interventions give it.
        int differing = 0;
        for (int p = 0; p < mask.Length; p++) if (mask[p] && strength[p] >= threshold) differing++;
        double share = differing / (double)(h * w);
        return new CueRegion(share <= MaxLocalShare ? Local : Global, BoundingBox(mask, h, w), share, peak, threshold, with, without, mapW, mapH, map, mask);
    }

    /// <summary>
    /// Pixels over the threshold, grown by a margin (so the region holds the cue's edges, and nearby strokes such as
    /// the digits of a stamp join), split into 8-connected components; components with less than a tenth of the
    /// strongest one's mass are dropped as stray pixels.
    /// </summary>
    public static bool[] Region(double[] strength, int h, int w, double threshold)
    {
        var hot = new bool[h * w];
        bool any = false;
        for (int p = 0; p < hot.Length; p++) any |= hot[p] = strength[p] >= threshold;
        if (!any) return hot;
        int margin = Math.Max(1, (int)Math.Round(0.02 * Math.Min(h, w)));
        var grown = Dilate(hot, h, w, margin);
        var label = new int[h * w];
        var mass = new List<double> { 0 };
        var stack = new Stack<int>();
        for (int start = 0; start < grown.Length; start++)
        {
            if (!grown[start] || label[start] != 0) continue;
            int id = mass.Count;
            double m = 0;
            label[start] = id;
            stack.Push(start);
            while (stack.Count > 0)
            {
                int p = stack.Pop(), y = p / w, x = p % w;
                if (hot[p]) m += strength[p];
                for (int dy = -1; dy <= 1; dy++)
                    for (int dx = -1; dx <= 1; dx++)
                    {
                        int yy = y + dy, xx = x + dx;
                        if (yy < 0 || yy >= h || xx < 0 || xx >= w) continue;
                        int q = yy * w + xx;
                        if (grown[q] && label[q] == 0) { label[q] = id; stack.Push(q); }
                    }
            }
            mass.Add(m);
        }
        double strongest = mass.Max();
        var mask = new bool[h * w];
        for (int p = 0; p < mask.Length; p++) mask[p] = label[p] != 0 && mass[label[p]] >= 0.1 * strongest;
        return mask;
    }

    private static bool[] Dilate(bool[] src, int h, int w, int r)
    {
        var dst = new bool[src.Length];
        for (int y = 0; y < h; y++)
            for (int x = 0; x < w; x++)
            {
                if (!src[y * w + x]) continue;
                for (int yy = Math.Max(0, y - r); yy <= Math.Min(h - 1, y + r); yy++)
                    for (int xx = Math.Max(0, x - r); xx <= Math.Min(w - 1, x + r); xx++) dst[yy * w + xx] = true;
            }
        return dst;
    }

    public static Box BoundingBox(bool[] mask, int h, int w)
    {
        int x0 = w, y0 = h, x1 = -1, y1 = -1;
        for (int y = 0; y < h; y++)
            for (int x = 0; x < w; x++)
                if (mask[y * w + x]) { x0 = Math.Min(x0, x); x1 = Math.Max(x1, x); y0 = Math.Min(y0, y); y1 = Math.Max(y1, y); }
        return x1 < 0 ? new Box(0, 0, 0, 0) : new Box(x0, y0, x1 - x0 + 1, y1 - y0 + 1);
    }

    /// <summary>Max-pools the map to at most <see cref="MapSide"/> cells a side, scaled 0..100 of the peak.</summary>
    private static (int W, int H, int[] Map) Pool(double[] strength, int h, int w, double peak)
    {
        // One scale for both axes keeps the map's aspect; the longer side gets MapSide cells.
        int side = Math.Max(h, w);
        int mw = side <= MapSide ? w : Math.Max(1, (int)Math.Ceiling(w * (double)MapSide / side));
        int mh = side <= MapSide ? h : Math.Max(1, (int)Math.Ceiling(h * (double)MapSide / side));
        var map = new int[mw * mh];
        if (!(peak > 0)) return (mw, mh, map);
        for (int y = 0; y < h; y++)
            for (int x = 0; x < w; x++)
            {
                int cell = y * mh / h * mw + x * mw / w;
                map[cell] = Math.Max(map[cell], (int)Math.Round(100 * strength[y * w + x] / peak));
            }
        return (mw, mh, map);
    }
}
