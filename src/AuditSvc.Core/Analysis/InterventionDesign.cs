namespace AuditSvc.Core.Analysis;

/// <summary>
/// One paired intervention: a recipient edited twice, once with material from a donor that carries the value
/// (treated) and once from a donor of the same label without it (control). For occlusion the "recipient" is the
/// image with the value and <see cref="ControlDonor"/> is the same-label image without it that gets the same fill.
/// </summary>
public readonly record struct InterventionPair(int Recipient, int Donor, int ControlDonor);

/// <summary>
/// Which images take part in the interventions of one cue (DESIGN.md, behavioural evidence). Pure and seeded, so the
/// command line and the service pick the same images. Every eligible image may be drawn, not only the misled ones:
/// the control arm carries everything the treated arm carries except the value, so the difference of the two arms
/// is the cue's effect and is zero in expectation when the model ignores the cue.
/// </summary>
public static class InterventionDesign
{
    /// <summary>
    /// Transplant (and the global colour intervention): recipients without the value (and not already predicted as
    /// the cue's class, when it is known), each with a donor carrying the value and a control donor of the donor's
    /// label without it. Donors come only from labels that have images on both sides.
    /// </summary>
    /// <param name="values">Per item, the attribute value (-1 missing or not scored).</param>
    public static List<InterventionPair> Transplant(int[] labels, int[] values, int[] predicted, int value, int cueClass, int pairs, int seed)
    {
        ArgumentNullException.ThrowIfNull(labels);
        ArgumentNullException.ThrowIfNull(values);
        ArgumentNullException.ThrowIfNull(predicted);
        var rng = new Random(seed);
        var (with, without) = ByLabel(labels, values, value);
        var donorLabels = with.Keys.Where(k => without.ContainsKey(k)).Order().ToList();
        if (donorLabels.Count == 0 || pairs <= 0) return [];
        var donors = donorLabels.SelectMany(k => with[k]).ToList();
        var recipients = Enumerable.Range(0, labels.Length)
            .Where(i => values[i] >= 0 && values[i] != value && predicted[i] >= 0 && (cueClass < 0 || predicted[i] != cueClass))
            .ToList();
        Shuffle(recipients, rng);
        var result = new List<InterventionPair>();
        foreach (var r in recipients.Take(pairs))
        {
            int donor = donors[rng.Next(donors.Count)];
            var controls = without[labels[donor]];
            int control = controls[rng.Next(controls.Count)];
            if (control == r && controls.Count > 1) control = controls[(controls.IndexOf(control) + 1) % controls.Count];
            result.Add(new InterventionPair(r, donor, control));
        }
        return result;
    }

    /// <summary>
    /// Occlusion: images with the value (treated), each matched to an image of the same label without it (control);
    /// both get the cue region filled. Matching on the label keeps the object's share of the effect out of the difference.
    /// </summary>
    public static List<InterventionPair> Occlusion(int[] labels, int[] values, int[] predicted, int value, int pairs, int seed)
    {
        ArgumentNullException.ThrowIfNull(labels);
        ArgumentNullException.ThrowIfNull(values);
        ArgumentNullException.ThrowIfNull(predicted);
        var rng = new Random(seed);
        var (with, without) = ByLabel(labels, values, value);
        var treated = with.Where(kv => without.ContainsKey(kv.Key)).SelectMany(kv => kv.Value).Where(i => predicted[i] >= 0).ToList();
        Shuffle(treated, rng);
        var result = new List<InterventionPair>();
        foreach (var t in treated.Take(pairs))
        {
            var controls = without[labels[t]];
            result.Add(new InterventionPair(t, t, controls[rng.Next(controls.Count)]));
        }
        return result;
    }

    private static (Dictionary<int, List<int>> With, Dictionary<int, List<int>> Without) ByLabel(int[] labels, int[] values, int value)
    {
        var with = new Dictionary<int, List<int>>();
        var without = new Dictionary<int, List<int>>();
        for (int i = 0; i < labels.Length; i++)
        {
            if (values[i] < 0) continue;
            var d = values[i] == value ? with : without;
            if (!d.TryGetValue(labels[i], out var list)) d[labels[i]] = list = [];
            list.Add(i);
        }
        return (with, without);
    }

    private static void Shuffle(List<int> list, Random rng)
    {
        for (int i = list.Count - 1; i > 0; i--)
        {
            int j = rng.Next(i + 1);
            (list[i], list[j]) = (list[j], list[i]);
        }
    }
}
