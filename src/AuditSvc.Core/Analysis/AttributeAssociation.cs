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

/// <summary>Which class a cue pushes the model's decisions toward.</summary>
public static class CueDirection
{
    /// <summary>
    /// The class whose share of predictions rises most on images with the value against images without it, or -1
    /// when none rises. Read off the model's own decisions, not off the set's label mix: on a set where the cue is
    /// independent of the label the label mix says nothing, while the model's decisions still show where the cue
    /// pushes them.
    /// </summary>
    public static int PushedClass(ImageSets.ItemTable table, Activations.ActivationResult act, int attribute, int value)
    {
        var with = new int[act.ClassCount];
        var without = new int[act.ClassCount];
        int nWith = 0, nWithout = 0;
        foreach (var item in table.Items)
        {
            int v = item.AttributeValues[attribute], p = act.Predicted[item.Index];
            if (!act.Scored[item.Index] || v < 0 || p < 0) continue;
            if (v == value) { with[p]++; nWith++; } else { without[p]++; nWithout++; }
        }
        if (nWith == 0 || nWithout == 0) return -1;
        int best = -1;
        double bestRise = 0;
        for (int k = 0; k < act.ClassCount; k++)
        {
            double rise = with[k] / (double)nWith - without[k] / (double)nWithout;
            if (rise > bestRise) { bestRise = rise; best = k; }
        }
        return best;
    }
}
