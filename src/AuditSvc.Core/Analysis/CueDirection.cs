using AuditSvc.Core.Activations;
using AuditSvc.Core.ImageSets;

namespace AuditSvc.Core.Analysis;

/// <summary>
/// Where one attribute's values push the model's decisions: <see cref="Pushes"/>[value, class] is true when the share
/// of predictions of that class rises significantly on images with the value; <see cref="Rise"/> is that rise.
/// </summary>
public sealed record CuePushes(bool[,] Pushes, double[,] Rise)
{
    /// <summary>The class a value pushes toward most, or -1 when it pushes toward none.</summary>
    public int PushedClass(int value)
    {
        int best = -1;
        for (int c = 0; c < Pushes.GetLength(1); c++)
            if (Pushes[value, c] && (best < 0 || Rise[value, c] > Rise[value, best])) best = c;
        return best;
    }

    public bool Any()
    {
        foreach (var b in Pushes) if (b) return true;
        return false;
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
    /// One counting pass over the items.
    /// </summary>
    public static CuePushes Of(ItemTable table, ActivationResult act, int attribute)
    {
        var values = new int[table.Items.Count];
        foreach (var item in table.Items) values[item.Index] = act.Scored[item.Index] ? item.AttributeValues[attribute] : -1;
        return Of(values, act.Predicted, table.Attributes[attribute].Values.Count, act.ClassCount, null);
    }

    /// <summary>
    /// The same over plain arrays: <paramref name="values"/>[i] is item i's value (-1 missing or unscored),
    /// <paramref name="predicted"/>[i] its predicted class (-1 unscored); only items where
    /// <paramref name="include"/> is true (all when null) are counted, which is how cross-fitting reads one half.
    /// </summary>
    public static CuePushes Of(int[] values, int[] predicted, int valueCount, int classCount, Func<int, bool>? include)
    {
        int vc = valueCount, k = classCount;
        var counts = new int[vc, k];
        var perValue = new int[vc];
        var perClass = new int[k];
        int total = 0;
        for (int i = 0; i < values.Length; i++)
        {
            int v = values[i], p = predicted[i];
            if (v < 0 || p < 0 || p >= k || (include is not null && !include(i))) continue;
            counts[v, p]++;
            perValue[v]++;
            perClass[p]++;
            total++;
        }
        var pushes = new bool[vc, k];
        var rise = new double[vc, k];
        for (int v = 0; v < vc; v++)
        {
            int nWith = perValue[v], nWithout = total - nWith;
            if (nWith == 0 || nWithout == 0) continue;
            for (int c = 0; c < k; c++)
            {
                double pWith = counts[v, c] / (double)nWith, pWithout = (perClass[c] - counts[v, c]) / (double)nWithout;
                double pooled = perClass[c] / (double)total;
                double se = Math.Sqrt(pooled * (1 - pooled) * (1.0 / nWith + 1.0 / nWithout));
                rise[v, c] = pWith - pWithout;
                pushes[v, c] = se > 0 && rise[v, c] / se >= MinZ;
            }
        }
        return new CuePushes(pushes, rise);
    }

    /// <summary>The class whose prediction share rises most with the value among those it pushes toward, or -1.</summary>
    public static int PushedClass(ItemTable table, ActivationResult act, int attribute, int value) =>
        Of(table, act, attribute).PushedClass(value);
}
