using System.Globalization;
using System.Runtime.InteropServices;
using AuditSvc.Core.Activations;
using AuditSvc.Core.Analysis;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// Does the model's decision follow the cue? For each cue: its region is read from the pixels
/// (<see cref="CueRegions"/>); a local region gets paired transplant and occlusion, a global one a paired colour
/// transfer, none gets nothing (the observational gap stands alone). Which images, and the statistics, are Core's
/// (<see cref="InterventionDesign"/>, <see cref="PairedMeasures"/>); this class only edits pixels and runs the model.
/// </summary>
public static class Interventions
{
    /// <summary>Images per label and side that feed a cue region's pixel map.</summary>
    public const int RegionImagesPerSide = 120;

    /// <summary>Fewest pairs worth a test: below this McNemar's exact test cannot reach the gate level after adjustment.</summary>
    public const int MinPairs = 8;

    private const int Seed = 20261202;

    public static Rgb24 MeanColour(ItemTable table, ImageRuns runs, int sample = 100)
    {
        double r = 0, g = 0, b = 0;
        long n = 0;
        int step = Math.Max(1, table.Items.Count / sample);
        runs.Prefetch(table, Enumerable.Range(0, (table.Items.Count + step - 1) / step).Select(j => j * step));
        for (int i = 0; i < table.Items.Count; i += step)
        {
            var img = runs.Fitted(table.Items[i].Path, i);
            if (img is null) continue;
            for (int y = 0; y < img.Height; y += 2)
                for (int x = 0; x < img.Width; x += 2) { var p = img[x, y]; r += p.R; g += p.G; b += p.B; n++; }
        }
        return n == 0 ? new Rgb24(128, 128, 128) : new Rgb24((byte)(r / n), (byte)(g / n), (byte)(b / n));
    }

    /// <summary>Region and paired measures for every target, within the policy's budget per attribute.</summary>
    public static List<CueEvidence> Run(ImageRuns runs, ItemTable table, ActivationResult act, IReadOnlyList<CueTarget> targets, AuditPolicy policy, CancellationToken ct)
    {
        var results = new List<CueEvidence>();
        var mean = MeanColour(table, runs);
        foreach (var group in targets.GroupBy(t => t.Attribute))
        {
            int budget = policy.InterventionBudget / group.Count();
            bool first = true;
            foreach (var target in group)
            {
                ct.ThrowIfCancellationRequested();
                // Filling the region on a yes/no attribute's second value is the first value's occlusion mirrored
                // (same images, arms swapped): it adds no evidence, so its runs go to the transplant instead.
                bool occlude = first || table.Attributes[target.Attribute].Values.Count != 2;
                results.Add(RunOne(runs, table, act, target, budget, mean, occlude));
                first = false;
            }
        }
        return results;
    }

    private static CueEvidence RunOne(ImageRuns runs, ItemTable table, ActivationResult act, CueTarget target, int budget, Rgb24 mean, bool occlude)
    {
        int n = table.Items.Count, h = runs.Height, w = runs.Width;
        var labels = new int[n];
        var values = new int[n];
        foreach (var item in table.Items)
        {
            labels[item.Index] = item.Label;
            values[item.Index] = act.Scored[item.Index] ? item.AttributeValues[target.Attribute] : -1;
        }
        var region = RegionOf(runs, table, labels, values, target.Value, h, w);
        var attr = table.Attributes[target.Attribute];
        string cue = $"{attr.Name}={attr.Values[target.Value]}";
        string toward = target.CueClass >= 0 ? $"moved to {table.ClassName(target.CueClass)}" : "changed prediction";
        int before = runs.Runs;
        var measures = new List<Measure?>();
        string? note = null;
        switch (region.Kind)
        {
            case CueRegions.None:
                note = $"{cue}: no pixel differs between images with and without it (within labels), so nothing can be moved; only the observational measure stands";
                break;
            case CueRegions.Local:
            {
                var where = RegionText(region);
                var pairs = InterventionDesign.Transplant(labels, values, act.Predicted, target.Value, target.CueClass, occlude ? budget / 4 : budget / 2, Seed + target.Attribute);
                if (pairs.Count >= MinPairs)
                    measures.Add(Transplant(runs, table, act, pairs, region.Mask, target.CueClass, $"{cue}: region {where} pasted from an image with the value (treated) or from one of the same label without it (control) into images without it", toward));
                if (occlude)
                {
                    var occl = InterventionDesign.Occlusion(labels, values, act.Predicted, target.Value, budget / 4, Seed + 7 + target.Attribute);
                    if (occl.Count >= MinPairs)
                        measures.Add(Occlude(runs, table, act, occl, region.Mask, mean, $"{cue}: region {where} filled with the set's mean colour on images with the value (treated) and on images of the same label without it (control)"));
                }
                int expected = occlude ? 2 : 1;
                if (measures.Count(m => m is not null) < expected) note = $"{cue}: fewer than {MinPairs} eligible pairs for " + (measures.All(m => m is null) ? "the interventions" : "one of the interventions");
                break;
            }
            case CueRegions.Global when region.Share < CueRegions.MinImageWideShare:
                note = string.Create(CultureInfo.InvariantCulture, $"{cue}: the region covers {region.Share:P0} of the image: too large for a patch, too small to be a colour cast; no intervention, only the observational measure");
                break;
            default:
            {
                note = string.Create(CultureInfo.InvariantCulture, $"{cue}: the region covers {region.Share:P0} of the image, so it is not a local cue: no patch was moved; its colour statistics were transferred instead");
                var pairs = InterventionDesign.Transplant(labels, values, act.Predicted, target.Value, target.CueClass, budget / 2, Seed + 13 + target.Attribute);
                if (pairs.Count >= MinPairs)
                    measures.Add(ColourTransfer(runs, table, act, pairs, target.CueClass, $"{cue}: each channel's mean and spread moved to those of an image with the value (treated) or of one of the same label without it (control), on images without it", toward));
                break;
            }
        }
        string label = target.CueClass >= 0 ? $"{cue} → {table.ClassName(target.CueClass)}" : cue;
        return new CueEvidence(target.Attribute, target.Value, target.CueClass, region,
            measures.OfType<Measure>().Select(m => m with { Cue = label }).ToList(), runs.Runs - before, note);
    }

    private static string RegionText(CueRegion r) => r.Box is { } b
        ? string.Create(CultureInfo.InvariantCulture, $"({b.X},{b.Y} {b.Width}×{b.Height}, {r.Share:P0} of the image)")
        : "";

    /// <summary>The cue region of one value, from up to <see cref="RegionImagesPerSide"/> images per label and side.</summary>
    public static CueRegion RegionOf(ImageRuns runs, ItemTable table, int[] labels, int[] values, int value, int h, int w)
    {
        var groups = new PixelGroups(h, w);
        var rng = new Random(Seed);
        var byGroup = new Dictionary<(int Label, bool With), List<int>>();
        for (int i = 0; i < labels.Length; i++)
        {
            if (values[i] < 0) continue;
            var key = (labels[i], values[i] == value);
            if (!byGroup.TryGetValue(key, out var list)) byGroup[key] = list = [];
            list.Add(i);
        }
        // Labels with the most images on their thinner side first: they carry the map.
        var order = byGroup.Keys.Select(k => k.Label).Distinct()
            .Where(k => byGroup.ContainsKey((k, true)) && byGroup.ContainsKey((k, false)))
            .OrderByDescending(k => Math.Min(byGroup[(k, true)].Count, byGroup[(k, false)].Count)).ThenBy(k => k)
            .Take(PixelGroups.MaxLabels).ToList();
        var bytes = new byte[h * w * 3];
        foreach (var k in order)
            foreach (var side in new[] { true, false })
            {
                var items = byGroup[(k, side)].OrderBy(_ => rng.Next()).Take(RegionImagesPerSide).ToList();
                runs.Prefetch(table, items);
                foreach (var i in items)
                {
                    var img = runs.Fitted(table.Items[i].Path, i);
                    if (img is null) continue;
                    img.CopyPixelDataTo(MemoryMarshal.Cast<byte, Rgb24>(bytes.AsSpan()));
                    groups.Add(k, side, bytes);
                }
            }
        return CueRegions.Find(groups);
    }

    private static Measure? Transplant(ImageRuns runs, ItemTable table, ActivationResult act, List<InterventionPair> pairs, bool[] mask, int cueClass, string design, string toward) =>
        RunPairs(runs, table, act, pairs, (target, donor) => ImageRuns.Paste(donor, target, mask), cueClass, "transplant", design, toward);

    private static Measure? ColourTransfer(ImageRuns runs, ItemTable table, ActivationResult act, List<InterventionPair> pairs, int cueClass, string design, string toward) =>
        RunPairs(runs, table, act, pairs, (target, donor) => ImageRuns.MatchColour(target, donor), cueClass, "colour_transfer", design, toward);

    /// <summary>Treated: recipient edited with the donor; control: the same recipient edited with the control donor.</summary>
    private static Measure? RunPairs(ImageRuns runs, ItemTable table, ActivationResult act, List<InterventionPair> pairs, Action<Image<Rgb24>, Image<Rgb24>> edit,
        int cueClass, string name, string design, string toward)
    {
        var treated = new List<Image<Rgb24>>();
        var control = new List<Image<Rgb24>>();
        var kept = new List<int>();
        runs.Prefetch(table, pairs.SelectMany(p => new[] { p.Recipient, p.Donor, p.ControlDonor }));
        foreach (var p in pairs)
        {
            var target = runs.Fitted(table.Items[p.Recipient].Path, p.Recipient);
            var donor = runs.Fitted(table.Items[p.Donor].Path, p.Donor);
            var other = runs.Fitted(table.Items[p.ControlDonor].Path, p.ControlDonor);
            if (target is null || donor is null || other is null) continue;
            var t = target.Clone();
            edit(t, donor);
            treated.Add(t);
            var c = target.Clone();
            edit(c, other);
            control.Add(c);
            kept.Add(p.Recipient);
        }
        if (kept.Count < MinPairs) { Dispose(treated, control); return null; }
        var pt = runs.Run(treated).Predicted;
        var pc = runs.Run(control).Predicted;
        Dispose(treated, control);
        bool Moved(int pred, int i) => cueClass >= 0 ? pred == cueClass : pred != act.Predicted[kept[i]];
        var m = PairedMeasures.Of(name, pt.Select(Moved).ToList(), pc.Select(Moved).ToList(), toward, design);
        int anyT = pt.Where((p, i) => p != act.Predicted[kept[i]]).Count(), anyC = pc.Where((p, i) => p != act.Predicted[kept[i]]).Count();
        return m is null ? null : m with { Detail = m.Detail + string.Create(CultureInfo.InvariantCulture, $"; any change of prediction: {anyT}/{kept.Count} treated, {anyC}/{kept.Count} control") };
    }

    /// <summary>Treated: the image with the value, region filled; control: a same-label image without it, same fill. Outcome: prediction changes.</summary>
    private static Measure? Occlude(ImageRuns runs, ItemTable table, ActivationResult act, List<InterventionPair> pairs, bool[] mask, Rgb24 mean, string design)
    {
        var treated = new List<Image<Rgb24>>();
        var control = new List<Image<Rgb24>>();
        var kept = new List<InterventionPair>();
        runs.Prefetch(table, pairs.SelectMany(p => new[] { p.Recipient, p.ControlDonor }));
        foreach (var p in pairs)
        {
            var a = runs.Fitted(table.Items[p.Recipient].Path, p.Recipient);
            var b = runs.Fitted(table.Items[p.ControlDonor].Path, p.ControlDonor);
            if (a is null || b is null) continue;
            var t = a.Clone();
            ImageRuns.Fill(t, mask, mean);
            treated.Add(t);
            var c = b.Clone();
            ImageRuns.Fill(c, mask, mean);
            control.Add(c);
            kept.Add(p);
        }
        if (kept.Count < MinPairs) { Dispose(treated, control); return null; }
        var pt = runs.Run(treated).Predicted;
        var pc = runs.Run(control).Predicted;
        Dispose(treated, control);
        return PairedMeasures.Of("occlusion",
            pt.Select((p, i) => p != act.Predicted[kept[i].Recipient]).ToList(),
            pc.Select((p, i) => p != act.Predicted[kept[i].ControlDonor]).ToList(), "changed prediction", design);
    }

    private static void Dispose(List<Image<Rgb24>> a, List<Image<Rgb24>> b)
    {
        foreach (var i in a) i.Dispose();
        foreach (var i in b) i.Dispose();
    }
}
