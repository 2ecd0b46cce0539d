using System.Globalization;
using AuditSvc.Core.Audits;

namespace AuditSvc.Core.Reporting;

/// <summary>
/// The audit in a reviewer's words: one sentence per measure, the verdict's reasons as sentences, readable names for
/// measures and layers, and the one-line definitions behind "how this was computed". Plain text (the caller escapes).
/// </summary>
public static class PlainWords
{
    private static readonly CultureInfo Inv = CultureInfo.InvariantCulture;

    /// <summary>What a measure is called on the page (audit.json keeps the snake_case name).</summary>
    public static string MeasureName(string name) => MeasureNames.Words(name);

    /// <summary>
    /// A short readable name for a layer's tensor: exporters name tensors by their path in the graph
    /// (<c>/layer2/layer2.1/relu_1/Relu_output_0</c>); the reader wants the block and the operation (<c>layer2.1 · relu_1</c>).
    /// </summary>
    public static string LayerName(string tensor)
    {
        ArgumentNullException.ThrowIfNull(tensor);
        var t = tensor;
        foreach (var suffix in new[] { "_output_0", ":0" })
            if (t.EndsWith(suffix, StringComparison.Ordinal)) t = t[..^suffix.Length];
        var parts = t.Split('/', StringSplitOptions.RemoveEmptyEntries).ToList();
        if (parts.Count == 0) return tensor;
        // "/layer1/layer1.0/conv1/Conv": the last part repeats the operator; nested parts repeat their parent's prefix.
        for (int i = parts.Count - 1; i > 0; i--)
            if (parts[i].StartsWith(parts[i - 1] + ".", StringComparison.Ordinal)) parts.RemoveAt(i - 1);
        var name = string.Join(" · ", parts.TakeLast(3));
        if (parts.Count == 2 && int.TryParse(parts[0], NumberStyles.None, Inv, out _))
            name = $"step {parts[0]} · {parts[1]}";
        else if (parts.Count == 1 && int.TryParse(parts[0], NumberStyles.None, Inv, out _)) name = $"step {parts[0]}";
        return name.Length > 48 ? "…" + name[^47..] : name;
    }

    /// <summary>One sentence saying what a measure found, with its effect and interval.</summary>
    public static string Sentence(AttributeReport a, Measure m, IReadOnlyList<GroupAccuracy> groups)
    {
        ArgumentNullException.ThrowIfNull(a);
        ArgumentNullException.ThrowIfNull(m);
        var value = CueCards.CueValue(a.Name, m.Cue);
        var key = value is null ? a.Name : $"{a.Name}={value}";
        var target = CueCards.Target(m.Cue);
        var moved = target is null ? "changed the prediction of" : "moved";
        var to = target is null ? "" : $" to \u201c{target}\u201d";
        var effect = $"effect {F(m.Value)} (95% interval {F(m.Low)} to {F(m.High)})";
        int n = m.N, t = m.TreatedHits ?? 0, c = m.ControlHits ?? 0;
        bool counted = m.TreatedHits is not null && m.ControlHits is not null;
        switch (m.Name)
        {
            case "transplant" when counted:
                return target is null
                    ? $"Pasting the region of {key} into {n} images without it changed the prediction of {t}; pasting the same region from same-label images without it changed {c}: {effect}."
                    : $"Pasting the region of {key} into {n} images without it moved {t} of {n}{to}; pasting the same region from same-label images without it moved {c}: {effect}.";
            case "occlusion" when counted:
                return $"Covering the region of {key} with the set's mean colour changed {t} of {n} predictions on images with it, and {c} of {n} on same-label images without it: {effect}.";
            case "colour_transfer" when counted:
                return $"Giving {n} images without {key} the colours of images with it {moved} {t}{(target is null ? "" : $" of {n}")}{to}; the colours of same-label images without it {moved} {c}: {effect}.";
            case "accuracy_gap":
                var (aligned, conflicting) = GroupRates(a.Name, groups);
                return aligned is { } al && conflicting is { } co
                    ? $"Across {a.Name}, the model is right on {Pct(al)} of images whose {a.Name} points to their own label and on {Pct(co)} of those where it points to another class: a gap of {F(m.Value)} (95% interval {F(m.Low)} to {F(m.High)}, measured on half the images, with the direction learnt on the other half)."
                    : $"Across {a.Name}, accuracy on images whose {a.Name} points to their own label exceeds accuracy where it points to another class by {F(m.Value)} (95% interval {F(m.Low)} to {F(m.High)}).";
            default:
                return $"{MeasureName(m.Name)} on {key}: {effect}.";
        }
    }

    /// <summary>The verdict's reasons as sentences: "The model's decisions follow stamp=yes: pasting …".</summary>
    public static IReadOnlyList<string> Reasons(AuditResult r, IReadOnlyList<CueCard> cards)
    {
        ArgumentNullException.ThrowIfNull(r);
        ArgumentNullException.ThrowIfNull(cards);
        var list = new List<string>();
        foreach (var reason in r.Reasons)
        {
            var a = r.Attributes.FirstOrDefault(x => x.Name == reason.Attribute);
            var m = a?.Measures.FirstOrDefault(x => x.Name == reason.Measure && reason.Value is { } v && Math.Abs(x.Value - v) < 1e-12);
            if (reason.Kind == "leakage" && a is not null && m is not null)
            {
                var s = Sentence(a, m, r.Groups);
                var key = CueCards.CueValue(a.Name, m.Cue) is { } value ? $"{a.Name}={value}" : a.Name;
                list.Add($"The model's decisions follow {key}: {char.ToLowerInvariant(s[0])}{s[1..]}");
            }
            else if (reason.Kind == "confounded" && a is not null)
                list.Add($"{a.Name} nearly determines the label (Cramér's V {F(a.CramersV)}), so this set cannot tell whether the model uses {a.Name} or the object; the policy blocks such sets until images where {a.Name} and the label disagree are added.");
            else list.Add(reason.Message);
        }
        return list;
    }

    /// <summary>The one-line definitions behind "how this was computed", in reading order.</summary>
    public static readonly IReadOnlyList<(string Term, string Definition)> Glossary =
    [
        ("leakage", "the largest behavioural effect measured for an attribute, 0 to 1; compared with the policy's threshold."),
        ("accuracy gap", "accuracy on images whose attribute value points the model to their own label, minus accuracy where it points to another class, within each label; the direction is learnt on one half of the images and measured on the other."),
        ("transplant", "the cue's region is pasted into images without it (treated) and, as the control, the same region from a same-label image without the cue."),
        ("occlusion", "the cue's region is covered with the set's mean colour on images with the cue (treated) and on same-label images without it (control)."),
        ("colour transfer", "for a cue that covers most of the image: each colour channel's mean and spread are moved to those of an image with the cue (treated) or of a same-label image without it (control)."),
        ("effect", "the treated rate minus the control rate over the same images, so anything the edit itself does cancels out."),
        ("95% interval", "the range of effects consistent with the data (Newcombe's paired interval for interventions; the stratified Miettinen–Nurminen interval for the gap)."),
        ("p", "the chance of an effect at least this large if the model ignored the cue (McNemar's exact test for interventions; a stratified score test for the gap)."),
        ("adjusted p", "p corrected for every measure of the audit at once (Benjamini–Hochberg), so more attributes do not mean more false blocks."),
        ("blocks", "a measure blocks when its effect reaches the threshold, its adjusted p is at most the policy's gate level and its interval lies above 0."),
        ("description only", "a measure shown but never used to block (for a cue inferred from the model's own units, the accuracy gap would be circular)."),
        ("unit", "one channel of a layer; its score on an image is the channel's largest activation."),
        ("exemplars", "the images on which a unit scores highest (Zeiler & Fergus), cropped to the receptive field of its peak."),
        ("AUROC", "how often a unit scores an image with the value above one without it, within the same label (0.5 = no preference)."),
        ("q", "a unit's p-value (van Elteren rank test within labels) adjusted across all its tests (Benjamini–Hochberg)."),
        ("z", "the van Elteren statistic in standard units."),
        ("odds ratio", "odds of the value among the unit's exemplars over its odds in the set."),
        ("share, base rate, lift", "share of the unit's exemplars with the value, share of the set with it, and their ratio."),
        ("tail p", "the chance of at least that many exemplars with the value if exemplars were drawn at random (hypergeometric)."),
        ("Cramér's V", "how strongly an attribute and the label go together in the set, 0 to 1; near 1 the set cannot separate them (confounded)."),
        ("region map", "where pixels differ between images with and without the value, within labels; the outlined box is what the interventions moved."),
        ("peak map", "how many of a unit's top images peak in each ninth of the image."),
        ("place cue", "a pattern several units find at one fixed place across labels, with no column naming it; the audit infers which images carry it."),
    ];

    private static (double? Aligned, double? Conflicting) GroupRates(string attribute, IReadOnlyList<GroupAccuracy> groups)
    {
        double? Rate(string relation)
        {
            var g = groups.Where(x => x.Attribute == attribute && x.Relation == relation).ToList();
            int n = g.Sum(x => x.N);
            return n == 0 ? null : g.Sum(x => x.Correct) / (double)n;
        }
        return (Rate("aligned"), Rate("conflicting"));
    }

    private static string F(double v) => double.IsFinite(v) ? v.ToString("0.00", Inv) : "—";

    private static string Pct(double v) => (v * 100).ToString("0", Inv) + "%";
}
