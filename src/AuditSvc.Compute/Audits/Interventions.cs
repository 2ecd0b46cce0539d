using AuditSvc.Core.Activations;
using AuditSvc.Core.Analysis;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;
using AuditSvc.Core.Statistics;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Audits;


/// <summary>
/// Does the model's decision follow the cue? For the strongest findings of a cue, on spatial layers whose peak
/// box is a part of the image: occlusion fills the exemplars' peak boxes with the set's mean colour and counts
/// predictions of the cue's class that leave it; transplant pastes exemplar patches at the same place into
/// images of other labels that lack the cue and counts predictions that move to the cue's class, net of a
/// control that pastes the same box from another such image. Every rate comes with its sample size and a
/// Wilson interval; the run count is capped by the policy's budget.
/// </summary>
public static class Interventions
{
    /// <summary>Boxes larger than this share of the input are not a local cue: no patch is moved.</summary>
    public const double MaxBoxShare = 0.5;

    private const int UnitsPerCue = 3;
    private const int DonorsPerCue = 24;
    private const int MinMisled = 5;

    public static Rgb24 MeanColour(ItemTable table, ImageRuns runs, int sample = 100)
    {
        double r = 0, g = 0, b = 0;
        long n = 0;
        int step = Math.Max(1, table.Items.Count / sample);
        for (int i = 0; i < table.Items.Count; i += step)
        {
            var img = runs.Fitted(table.Items[i].Path, i);
            if (img is null) continue;
            for (int y = 0; y < img.Height; y += 2)
                for (int x = 0; x < img.Width; x += 2) { var p = img[x, y]; r += p.R; g += p.G; b += p.B; n++; }
        }
        return n == 0 ? new Rgb24(128, 128, 128) : new Rgb24((byte)(r / n), (byte)(g / n), (byte)(b / n));
    }

    public static List<CueIntervention> Run(ImageRuns runs, ItemTable table, ModelPlan plan, ActivationResult act, AnalysisResult analysis, AuditPolicy policy, CancellationToken ct)
    {
        var results = new List<CueIntervention>();
        var mean = MeanColour(table, runs);
        int h = plan.Recipe.Height, w = plan.Recipe.Width;
        // One counting pass per attribute: where its values push the model's decisions.
        var directions = new Dictionary<int, CuePushes>();
        int Pushed(int attribute, int value) =>
            (directions.TryGetValue(attribute, out var d) ? d : directions[attribute] = CueDirection.Of(table, act, attribute)).PushedClass(value);
        foreach (var link in analysis.Links)
        {
            ct.ThrowIfCancellationRequested();
            var local = analysis.Findings
                .Where(f => f.Attribute == link.Attribute && f.Layer.Layer.Rank == 4 && f.Top.Length > 0
                            && Pushed(f.Attribute, f.Value) >= 0
                            && BoxShare(Regions.PeakBox(f.Layer.Layer, f.Top[0], h, w), h, w) <= MaxBoxShare)
                .ToList();
            if (local.Count == 0) continue;
            int value = local[0].Value;
            int cue = Pushed(link.Attribute, value);
            // The deepest local units see the whole cue; a first-layer unit sees a few pixels of it.
            var units = local.Where(f => f.Value == value)
                .OrderByDescending(f => BoxShare(Regions.PeakBox(f.Layer.Layer, f.Top[0], h, w), h, w))
                .ThenByDescending(f => f.Test.Auroc).Take(UnitsPerCue).ToList();
            var donors = Donors(table, units, link.Attribute, value, h, w);
            if (donors.Count == 0) continue;
            int before = runs.Runs;
            var occlusion = Occlude(runs, table, plan, act, link.Attribute, value, cue, mean, units[0], policy.InterventionBudget / 5);
            var transplant = Transplant(runs, table, act, donors, link.Attribute, value, cue, policy.InterventionBudget * 2 / 5);
            results.Add(new CueIntervention(link.Attribute, value, cue, occlusion, transplant, runs.Runs - before));
        }
        return results;
    }

    public static double BoxShare(Box box, int h, int w) => box.Width * (double)box.Height / (h * (double)w);

    /// <summary>Exemplars of the cue's strongest units that carry the value, with their peak boxes, best first.</summary>
    public static List<(int Item, Box Box)> Donors(ItemTable table, IReadOnlyList<FindingCore> units, int attribute, int value, int h, int w)
    {
        var donors = new List<(int, Box)>();
        var seen = new HashSet<int>();
        int depth = units.Max(u => u.Top.Length);
        for (int r = 0; r < depth && donors.Count < DonorsPerCue; r++)
            foreach (var u in units)
            {
                if (r >= u.Top.Length) continue;
                var p = u.Top[r];
                if (table.Items[p.Item].AttributeValues[attribute] != value || !seen.Add(p.Item)) continue;
                donors.Add((p.Item, Regions.PeakBox(u.Layer.Layer, p, h, w)));
                if (donors.Count >= DonorsPerCue) break;
            }
        return donors;
    }

    /// <summary>
    /// Occlusion where the cue misleads: images with the cue, of another label, predicted as the cue's class. Their
    /// box at the cue's usual place (the strongest unit's modal peak) is filled with the set's mean colour; the rate
    /// is the share whose prediction leaves the cue's class. With fewer than <see cref="MinMisled"/> such images it
    /// falls back to every image with the cue predicted as the cue's class, and says so.
    /// </summary>
    private static Measure? Occlude(ImageRuns runs, ItemTable table, ModelPlan plan, ActivationResult act, int attribute, int value, int cue, Rgb24 mean, FindingCore unit, int budget)
    {
        var (my, mx, _) = PlaceCandidates.ModalPlace(unit.Top);
        var box = unit.Layer.Layer.Field.BoxAt(my, mx, plan.Recipe.Height, plan.Recipe.Width);
        bool Carries(ImageItem i) => act.Scored[i.Index] && i.AttributeValues[attribute] == value && act.Predicted[i.Index] == cue;
        var misled = table.Items.Where(i => Carries(i) && i.Label != cue).Select(i => i.Index).ToList();
        bool fallback = misled.Count < MinMisled;
        var chosen = (fallback ? table.Items.Where(Carries).Select(i => i.Index).ToList() : misled).Take(Math.Max(1, budget)).ToList();
        if (chosen.Count == 0) return null;
        var edited = new List<Image<Rgb24>>();
        var kept = new List<int>();
        foreach (var item in chosen)
        {
            var img = runs.Fitted(table.Items[item].Path, item)?.Clone();
            if (img is null) continue;
            ImageRuns.Fill(img, box, mean);
            edited.Add(img);
            kept.Add(item);
        }
        if (edited.Count == 0) return null;
        var (pred, scores) = runs.Run(edited, (unit.Layer, unit.Channel));
        foreach (var img in edited) img.Dispose();
        int left = pred.Count(p => p != cue), restored = kept.Where((item, i) => pred[i] == table.Items[item].Label).Count();
        var before = new float[table.Items.Count];
        act.Scores.ReadUnits(unit.Unit, 1, before);
        double fall = 0;
        int fallN = 0;
        for (int i = 0; i < kept.Count; i++)
            if (before[kept[i]] > 0) { fall += 1 - scores[i] / before[kept[i]]; fallN++; }
        var (lo, hi) = WilsonInterval.Compute(left, edited.Count);
        var who = fallback
            ? "images with the cue predicted as the cue's class (too few of other labels to test on)"
            : "images of other labels that carry the cue and are predicted as the cue's class";
        return new Measure("occlusion", left / (double)edited.Count, edited.Count, lo, hi, null,
            $"box ({box.X},{box.Y},{box.Width}×{box.Height}) filled with the set's mean colour on {who}; {left}/{edited.Count} left the cue's class, {restored} to their own label" +
            (fallN > 0 ? $"; unit {unit.Layer.Layer.Name}#{unit.Channel} score fell by {fall / fallN:P0} on average" : ""));
    }

    private static Measure? Transplant(ImageRuns runs, ItemTable table, ActivationResult act, List<(int Item, Box Box)> donors, int attribute, int value, int cue, int budget)
    {
        var rng = new Random(20261202);
        var recipients = table.Items
            .Where(i => act.Scored[i.Index] && i.Label != cue && act.Predicted[i.Index] != cue && i.AttributeValues[attribute] >= 0 && i.AttributeValues[attribute] != value)
            .Select(i => i.Index).OrderBy(_ => rng.Next()).Take(Math.Max(2, budget / 2)).ToList();
        return TransplantInto(runs, table, act, donors, recipients, cue, "images of other labels without the cue");
    }

    /// <summary>
    /// Transplant for a fixed-place candidate: recipients are images whose score on the unit is at or below its median
    /// (they lack the pattern). No class is known for a cue nobody named, so any change of prediction counts, net of
    /// the neutral patch; a class read off the exemplars' predictions would be confounded by other cues they share.
    /// </summary>
    public static Measure? MeasurePlace(ImageRuns runs, ItemTable table, ModelPlan plan, ActivationResult act, PlaceCandidateCore c, int budget)
    {
        var scores = new float[table.Items.Count];
        act.Scores.ReadUnits(c.Unit, 1, scores);
        var valid = scores.Where(float.IsFinite).Order().ToArray();
        if (valid.Length == 0) return null;
        float median = valid[valid.Length / 2];
        var rng = new Random(20261203);
        var recipients = table.Items
            .Where(i => act.Scored[i.Index] && scores[i.Index] <= median && !c.Top.Any(t => t.Item == i.Index))
            .Select(i => i.Index).OrderBy(_ => rng.Next()).Take(Math.Max(2, budget / 2)).ToList();
        var donors = c.Top.Take(DonorsPerCue).Select(p => (p.Item, Regions.PeakBox(c.Layer.Layer, p, plan.Recipe.Height, plan.Recipe.Width))).ToList();
        return TransplantInto(runs, table, act, donors, recipients, null, "images that score low on the unit");
    }

    /// <param name="cue">The class the cue stands for; null for a cue nobody named, where any change of prediction counts.</param>
    private static Measure? TransplantInto(ImageRuns runs, ItemTable table, ActivationResult act, List<(int Item, Box Box)> donors, List<int> recipients, int? cue, string who)
    {
        if (recipients.Count < 2) return null;
        var treated = new List<Image<Rgb24>>();
        var control = new List<Image<Rgb24>>();
        var kept = new List<int>();
        for (int j = 0; j < recipients.Count; j++)
        {
            var target = runs.Fitted(table.Items[recipients[j]].Path, recipients[j]);
            var donor = donors[j % donors.Count];
            var source = runs.Fitted(table.Items[donor.Item].Path, donor.Item);
            // The control patch: the same box from another recipient, an image that lacks the cue too.
            int other = recipients[(j + 1) % recipients.Count];
            var neutral = runs.Fitted(table.Items[other].Path, other);
            if (target is null || source is null || neutral is null) continue;
            var t = target.Clone();
            ImageRuns.Paste(source, t, donor.Box);
            treated.Add(t);
            var c = target.Clone();
            ImageRuns.Paste(neutral, c, donor.Box);
            control.Add(c);
            kept.Add(recipients[j]);
        }
        if (treated.Count == 0) return null;
        bool Moved(int prediction, int i) => cue is { } k ? prediction == k : prediction != act.Predicted[kept[i]];
        var moved = runs.Run(treated).Predicted.Where(Moved).Count();
        var movedControl = runs.Run(control).Predicted.Where(Moved).Count();
        foreach (var i in treated.Concat(control)) i.Dispose();
        int n = treated.Count;
        double rate = moved / (double)n, baseRate = movedControl / (double)n, net = rate - baseRate;
        var (lo, hi) = WilsonInterval.Compute(moved, n);
        // Interval of the net rate: the treated interval shifted by the control rate (the control is a reference level).
        var p = Hypergeometric.UpperTail(2 * n, moved + movedControl, n, moved);
        string what = cue is { } cls ? $"moved to the cue's class ({table.Labels[cls]})" : "changed their prediction";
        return new Measure("transplant", net, n, lo - baseRate, hi - baseRate, p,
            $"exemplar patch pasted at the same place into {who}; {moved}/{n} {what}, {movedControl}/{n} with a neutral patch from the same box");
    }
}
