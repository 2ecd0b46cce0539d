using AuditSvc.Core.Activations;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;

namespace AuditSvc.Core.Analysis;

/// <summary>A unit whose exemplars peak at one fixed place across several labels, before it is measured.</summary>
public sealed record PlaceCandidateCore(LayerSlice Layer, int Channel, int Unit, Peak[] Top, Box Place, string Region, double PlaceShare, int LabelsCovered, int CueClass, string? ExplainedBy);

/// <summary>
/// Cues nobody labelled: an overlay, a corner tag, a frame sits at the same pixels in every image that has it,
/// while objects move. A unit is a candidate when most of its exemplars peak at one grid position (give or take
/// one step), its receptive field is a part of the image, and its exemplars span several labels. One candidate
/// per place is kept (the most concentrated), at most <see cref="MaxCandidates"/> in all.
/// </summary>
public static class PlaceCandidates
{
    public const double MinPlaceShare = 0.6;
    public const double MaxBoxShare = 0.25;
    public const int MinPerLabel = 3;
    public const int MaxCandidates = 5;

    public static List<PlaceCandidateCore> Find(ItemTable table, ModelPlan plan, ActivationResult act, AnalysisResult analysis)
    {
        int h = plan.Recipe.Height, w = plan.Recipe.Width;
        var found = new List<PlaceCandidateCore>();
        for (int u = 0; u < act.UnitCount; u++)
        {
            var (slice, channel) = act.Locate(u);
            var layer = slice.Layer;
            if (layer.Rank != 4 || layer.Height < 4 || layer.Width < 4) continue;
            var top = act.Top.Sorted(u);
            if (top.Length < 10) continue;
            var (my, mx, share) = ModalPlace(top);
            if (share < MinPlaceShare) continue;
            var box = layer.Field.BoxAt(my, mx, h, w);
            if (box.Width * (double)box.Height / (h * (double)w) > MaxBoxShare) continue;
            var labelCounts = new int[table.Labels.Count];
            var predCounts = new int[act.ClassCount];
            foreach (var p in top)
            {
                labelCounts[table.Items[p.Item].Label]++;
                if (act.Predicted[p.Item] >= 0) predCounts[act.Predicted[p.Item]]++;
            }
            int covered = labelCounts.Count(c => c >= MinPerLabel);
            if (covered < 2) continue;
            int cue = Array.IndexOf(predCounts, predCounts.Max());
            var explained = analysis.Findings.FirstOrDefault(f => f.Unit == u);
            string? by = explained is null ? null : $"{table.Attributes[explained.Attribute].Name}={table.Attributes[explained.Attribute].Values[explained.Value]}";
            found.Add(new PlaceCandidateCore(slice, channel, u, top, box, Regions.Name(layer, top, h, w), share, covered, cue, by));
        }
        // One per place: candidates whose boxes overlap mostly describe the same cue.
        var kept = new List<PlaceCandidateCore>();
        foreach (var c in found.OrderByDescending(c => c.PlaceShare).ThenBy(c => c.Place.Width * c.Place.Height))
        {
            if (kept.Any(k => Overlap(k.Place, c.Place) > 0.3)) continue;
            kept.Add(c);
            if (kept.Count == MaxCandidates) break;
        }
        return kept;
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
        return (best.y, best.x, bestCount / (double)top.Length);
    }

    private static double Overlap(Box a, Box b)
    {
        int x0 = Math.Max(a.X, b.X), y0 = Math.Max(a.Y, b.Y), x1 = Math.Min(a.X + a.Width, b.X + b.Width), y1 = Math.Min(a.Y + a.Height, b.Y + b.Height);
        if (x1 <= x0 || y1 <= y0) return 0;
        double inter = (x1 - x0) * (double)(y1 - y0);
        return inter / Math.Min(a.Width * (double)a.Height, b.Width * (double)b.Height);
    }
}
