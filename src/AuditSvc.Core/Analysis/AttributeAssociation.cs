using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Analysis;

/// <summary>How strongly an attribute is tied to the label over the image set.</summary>
public sealed record AttributeLink(int Attribute, double CramersV, bool Confounded);

/// <summary>
/// Cramér's V (bias-corrected, Bergsma 2013) between each attribute and the label. An attribute is confounded when V reaches the policy's
/// level or when no value has a label with enough images on both sides for the stratified test: then the
/// audit cannot tell the cue from the class, and says so instead of guessing.
/// </summary>
public static class AttributeAssociation
{
    public static AttributeLink[] Compute(ItemTable table, bool[] scored, AuditPolicy policy)
    {
        int labels = table.Labels.Count;
        var result = new AttributeLink[table.Attributes.Count];
        for (int a = 0; a < result.Length; a++)
        {
            int vc = table.Attributes[a].Values.Count;
            var counts = new int[labels, vc];
            var labelCodes = new List<int>();
            var valueCodes = new List<int>();
            foreach (var item in table.Items)
            {
                int v = item.AttributeValues[a];
                if (!scored[item.Index] || v < 0) continue;
                counts[item.Label, v]++;
                labelCodes.Add(item.Label);
                valueCodes.Add(v);
            }
            double cv = vc < 2 || labels < 2 ? 0 : CramersV.Compute(labelCodes.ToArray(), labels, valueCodes.ToArray(), vc, biasCorrected: true);
            if (double.IsNaN(cv)) cv = 0;
            bool separable = false;
            for (int v = 0; v < vc && !separable; v++)
                for (int k = 0; k < labels; k++)
                {
                    int nk = 0;
                    for (int w = 0; w < vc; w++) nk += counts[k, w];
                    if (counts[k, v] >= policy.MinPerSide && nk - counts[k, v] >= policy.MinPerSide) { separable = true; break; }
                }
            result[a] = new AttributeLink(a, cv, cv >= policy.ConfoundedV || !separable);
        }
        return result;
    }
}

/// <summary>Which classes a cue pushes the model's decisions toward.</summary>
public static class CueDirection
{
    /// <summary>z of the two-proportion test a rise must reach to count as a push (one-sided, about p &lt; 0.025).</summary>
    public const double MinZ = 2.0;

    /// <summary>
    /// For every value of the attribute and every class: does the share of predictions of that class rise on images
    /// with the value against images without it (two-proportion z ≥ <see cref="MinZ"/>)? Read off the model's own
    /// decisions, not off the set's label mix: on a set where the cue is independent of the label the label mix says
    /// nothing, while the model's decisions still show where the cue pushes them. An absent-cue value ("no stamp")
    /// pushes toward every class the cue pulls away from, which is what makes its groups aligned or conflicting.
    /// </summary>
    public static bool[,] Pushes(ImageSets.ItemTable table, Activations.ActivationResult act, int attribute)
    {
        int vc = table.Attributes[attribute].Values.Count, k = act.ClassCount;
        var counts = new int[vc, k];
        var perValue = new int[vc];
        var perClass = new int[k];
        int total = 0;
        foreach (var item in table.Items)
        {
            int v = item.AttributeValues[attribute], p = act.Predicted[item.Index];
            if (!act.Scored[item.Index] || v < 0 || p < 0) continue;
            counts[v, p]++;
            perValue[v]++;
            perClass[p]++;
            total++;
        }
        var pushes = new bool[vc, k];
        for (int v = 0; v < vc; v++)
        {
            int nWith = perValue[v], nWithout = total - nWith;
            if (nWith == 0 || nWithout == 0) continue;
            for (int c = 0; c < k; c++)
            {
                double pWith = counts[v, c] / (double)nWith, pWithout = (perClass[c] - counts[v, c]) / (double)nWithout;
                double pooled = perClass[c] / (double)total;
                double se = Math.Sqrt(pooled * (1 - pooled) * (1.0 / nWith + 1.0 / nWithout));
                pushes[v, c] = se > 0 && (pWith - pWithout) / se >= MinZ;
            }
        }
        return pushes;
    }

    /// <summary>The class whose prediction share rises most with the value among those it pushes toward, or -1.</summary>
    public static int PushedClass(ImageSets.ItemTable table, Activations.ActivationResult act, int attribute, int value)
    {
        var pushes = Pushes(table, act, attribute);
        int best = -1;
        double bestRise = double.NegativeInfinity;
        int nWith = 0, nWithout = 0;
        var with = new int[act.ClassCount];
        var without = new int[act.ClassCount];
        foreach (var item in table.Items)
        {
            int v = item.AttributeValues[attribute], p = act.Predicted[item.Index];
            if (!act.Scored[item.Index] || v < 0 || p < 0) continue;
            if (v == value) { with[p]++; nWith++; } else { without[p]++; nWithout++; }
        }
        for (int c = 0; c < act.ClassCount; c++)
        {
            if (!pushes[value, c]) continue;
            double rise = with[c] / (double)nWith - without[c] / (double)nWithout;
            if (rise > bestRise) { bestRise = rise; best = c; }
        }
        return best;
    }
}
