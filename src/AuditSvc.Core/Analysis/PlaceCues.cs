using AuditSvc.Core.Activations;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;
using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Analysis;

/// <summary>A pattern that several live units agree on at one fixed place; an inferred yes/no attribute unless a column explains it.</summary>
/// <param name="Attribute">Its column index in the extended table; -1 when a column explains it (no attribute was added).</param>
/// <param name="Units">The agreeing units (global unit indices), strongest first.</param>
/// <param name="Split">Score of the strongest unit above which an image carries the pattern (Otsu).</param>
public sealed record PlaceCue(
    string Name,
    int Attribute,
    string Region,
    IReadOnlyList<int> Units,
    LayerSlice Layer,
    int Channel,
    Peak[] Top,
    double PlaceShare,
    int LabelsCovered,
    double Split,
    double Separability,
    int Carriers,
    string? ExplainedBy);

/// <summary>
/// Cues nobody labelled (DESIGN.md, cues with no column). An overlay, a corner tag or a frame sits at the same pixels in
/// every image that has it while objects move, so units that see it peak at one place across labels. Dead and flat
/// units are dropped first (their ninth exemplar scores no higher than the unit's median over the set: a dead unit's
/// "exemplars" are just the first items). A place becomes a cue when at least <see cref="MinAgreeingUnits"/> live units
/// peak there; the image carries it when the most bimodal of those units (largest Otsu separability) scores above
/// Otsu's split. The cue then goes through the cue region, the interventions and the gap like any column.
/// </summary>
public static class PlaceCues
{
    public const double MinPlaceShare = 0.6;
    public const int MinPerLabel = 3;
    public const int MinAgreeingUnits = 2;
    public const int MaxCues = 3;

    /// <summary>Places closer than this share of the shorter side are one place.</summary>
    public const double SamePlace = 0.125;

    public static (ItemTable Extended, List<PlaceCue> Cues) Infer(ItemTable table, ModelPlan plan, ActivationResult act, AnalysisResult analysis, int minGroupSize)
    {
        ArgumentNullException.ThrowIfNull(table);
        ArgumentNullException.ThrowIfNull(plan);
        ArgumentNullException.ThrowIfNull(act);
        ArgumentNullException.ThrowIfNull(analysis);
        int h = plan.Recipe.Height, w = plan.Recipe.Width, n = act.Scores.ItemCount;
        var scores = new float[n];
        double[]? otsuScratch = null; // one sort buffer for every unit of the place clusters, not one per unit
        var candidates = new List<(int Unit, LayerSlice Slice, int Channel, Peak[] Top, double Cy, double Cx, double Share, int Covered)>();
        for (int u = 0; u < act.UnitCount; u++)
        {
            var (slice, channel) = act.Locate(u);
            var layer = slice.Layer;
            if (layer.Rank != 4 || layer.Height < 4 || layer.Width < 4) continue;
            var top = act.Top.Sorted(u);
            if (top.Length < 10) continue;
            var (my, mx, share) = ModalPlace(top);
            if (share < MinPlaceShare) continue;
            var labelCounts = new int[table.Labels.Count];
            foreach (var p in top) labelCounts[table.Items[p.Item].Label]++;
            int covered = labelCounts.Count(c => c >= MinPerLabel);
            if (covered < 2) continue;
            act.Scores.ReadUnits(u, 1, scores);
            if (!Live(top, scores)) continue;
            double cy = Math.Clamp(layer.Field.Y.Center(my), 0, h - 1), cx = Math.Clamp(layer.Field.X.Center(mx), 0, w - 1);
            // The central ninth is where the object sits in most sets: units that agree there see the object, and an
            // object feature is not a shortcut. Overlays, tags and frames sit off centre. (Known limit: a stamp burned
            // into the centre is not inferred; a column for it still is tested.)
            if (Math.Abs(cy - (h - 1) / 2.0) < h / 6.0 && Math.Abs(cx - (w - 1) / 2.0) < w / 6.0) continue;
            candidates.Add((u, slice, channel, top, cy, cx, share, covered));
        }
        // Greedy clustering by place, most concentrated units first.
        double near = SamePlace * Math.Min(h, w);
        var clusters = new List<List<int>>();
        var order = Enumerable.Range(0, candidates.Count).OrderByDescending(i => candidates[i].Share).ThenBy(i => candidates[i].Unit).ToList();
        foreach (var i in order)
        {
            var c = candidates[i];
            var home = clusters.FirstOrDefault(cl => Math.Abs(candidates[cl[0]].Cy - c.Cy) <= near && Math.Abs(candidates[cl[0]].Cx - c.Cx) <= near);
            if (home is null) clusters.Add([i]);
            else home.Add(i);
        }
        var columns = table.Attributes.ToList();
        var added = new List<int[]>();
        var cues = new List<PlaceCue>();
        foreach (var cl in clusters.Where(cl => cl.Count >= MinAgreeingUnits).OrderByDescending(cl => cl.Count).Take(MaxCues))
        {
            // The most bimodal unit of the place decides who carries the pattern.
            int best = -1;
            double bestSplit = double.NaN, bestEta = -1;
            foreach (var i in cl)
            {
                act.Scores.ReadUnits(candidates[i].Unit, 1, scores);
                var (split, eta) = OtsuSplit.Find(scores, otsuScratch ??= new double[n]);
                if (eta > bestEta) (best, bestSplit, bestEta) = (i, split, eta);
            }
            var strongest = candidates[best];
            act.Scores.ReadUnits(strongest.Unit, 1, scores);
            var carries = new int[table.Items.Count];
            int yes = 0, no = 0;
            foreach (var item in table.Items)
            {
                float s = scores[item.Index];
                if (!act.Scored[item.Index] || float.IsNaN(s)) { carries[item.Index] = -1; continue; }
                carries[item.Index] = s > bestSplit ? 1 : 0;
                if (s > bestSplit) yes++; else no++;
            }
            // Two places that mark the same images are one pattern seen by units with different fields: keep the first.
            if (added.Any(a => Agreement(a, carries) >= 0.9)) continue;
            var units = new[] { strongest.Unit }.Concat(cl.Select(i => candidates[i].Unit).Where(u => u != strongest.Unit)).ToList();
            var explainedBy = ExplainedBy(table, analysis, units);
            string region = Regions.CellNames[Math.Clamp((int)(strongest.Cy * 3 / h), 0, 2) * 3 + Math.Clamp((int)(strongest.Cx * 3 / w), 0, 2)];
            string name = "place:" + region;
            for (int k = 2; columns.Any(c => c.Name == name) || cues.Any(c => c.Name == name); k++) name = $"place:{region}-{k}";
            bool usable = explainedBy is null && yes >= minGroupSize && no >= minGroupSize;
            int attribute = -1;
            if (usable)
            {
                attribute = columns.Count;
                columns.Add(new AttributeColumn(name, ["no", "yes"], false));
                added.Add(carries);
            }
            cues.Add(new PlaceCue(name, attribute, region, units, strongest.Slice, strongest.Channel, strongest.Top, strongest.Share, strongest.Covered,
                bestSplit, bestEta, yes, explainedBy));
        }
        if (added.Count == 0) return (table, cues);
        var items = table.Items.Select(it => it with { AttributeValues = [.. it.AttributeValues, .. added.Select(a => a[it.Index])] }).ToList();
        return (table with { Attributes = columns, Items = items }, cues);
    }

    /// <summary>The grid position holding most peaks, counting its 8 neighbours with it, and that share.</summary>
    public static (int Y, int X, double Share) ModalPlace(ReadOnlySpan<Peak> top)
    {
        var counts = new Dictionary<(int, int), int>();
        foreach (var p in top) counts[(p.Y, p.X)] = counts.GetValueOrDefault((p.Y, p.X)) + 1;
        (int y, int x) best = default;
        int bestCount = -1;
        foreach (var ((y, x), _) in counts)
        {
            int near = 0;
            for (int dy = -1; dy <= 1; dy++)
                for (int dx = -1; dx <= 1; dx++) near += counts.GetValueOrDefault((y + dy, x + dx));
            if (near > bestCount || (near == bestCount && counts[(y, x)] > counts[best])) { bestCount = near; best = (y, x); }
        }
        return (best.y, best.x, top.Length == 0 ? 0 : bestCount / (double)top.Length);
    }

    /// <summary>Jaccard agreement of two carrier vectors on "yes" (-1 = unknown is ignored).</summary>
    private static double Agreement(int[] a, int[] b)
    {
        int both = 0, either = 0;
        for (int i = 0; i < a.Length; i++)
        {
            bool x = a[i] == 1, y = b[i] == 1;
            if (x && y) both++;
            if (x || y) either++;
        }
        return either == 0 ? 0 : both / (double)either;
    }

    /// <summary>Live: the ninth exemplar scores above the unit's median over the set (DESIGN: dead and flat units are dropped).</summary>
    /// <remarks>
    /// The median here is the finite scores' element at index ⌊m/2⌋ in ascending order (m finite scores), and
    /// "ninth > that element" holds exactly when more than ⌊m/2⌋ finite scores lie below the ninth: one counting
    /// pass, no copy and no sort. It runs for every unit of the audit, over every image (a sorted copy per unit
    /// made the analysis of 50,000 images × 5,000 units allocate gigabytes; <see cref="LiveReference"/> is that
    /// plain version, kept for the test that compares the two).
    /// </remarks>
    public static bool Live(ReadOnlySpan<Peak> top, ReadOnlySpan<float> scores)
    {
        if (top.Length == 0) return false;
        var ninth = top[Math.Min(top.Length, 9) - 1].Score;
        int finite = 0, below = 0;
        foreach (float v in scores)
        {
            if (!float.IsFinite(v)) continue;
            finite++;
            if (v < ninth) below++;
        }
        return finite > 0 && float.IsFinite(ninth) && below > finite / 2;
    }

    /// <summary>The plain form of <see cref="Live"/>: sort the finite scores, take the middle one, compare.</summary>
    public static bool LiveReference(ReadOnlySpan<Peak> top, float[] scores)
    {
        if (top.Length == 0) return false;
        var valid = scores.Where(float.IsFinite).ToArray();
        if (valid.Length == 0) return false;
        Array.Sort(valid);
        float median = valid[valid.Length / 2];
        var ninth = top[Math.Min(top.Length, 9) - 1].Score;
        return float.IsFinite(ninth) && ninth > median;
    }

    private static string? ExplainedBy(ItemTable table, AnalysisResult analysis, IReadOnlyList<int> units)
    {
        var f = analysis.Findings.Where(f => units.Contains(f.Unit))
            .GroupBy(f => (f.Attribute, f.Value)).OrderByDescending(g => g.Count()).FirstOrDefault();
        return f is null ? null : $"{table.Attributes[f.Key.Attribute].Name}={table.Attributes[f.Key.Attribute].Values[f.Key.Value]}";
    }
}
