namespace AuditSvc.Core.Statistics;

/// <summary>
/// Otsu's threshold on a set of values (N. Otsu, "A threshold selection method from gray-level
/// histograms", IEEE Trans. Systems, Man, and Cybernetics 9(1) (1979) 62–66): the split into a lower
/// and an upper class that maximises the between-class variance σ²_B = w0·w1·(μ0 − μ1)², and Otsu's
/// separability η = σ²_B / σ²_T, the share of the total variance the split explains (0..1).
/// </summary>
/// <remarks>
/// Otsu worked on a histogram of gray levels; here every distinct value is a level, so the search is
/// exact and needs no binning choice.
/// </remarks>
public static class OtsuSplit
{
    /// <summary>
    /// Finds the split. Values above <c>Threshold</c> form the upper class (the threshold is the largest
    /// value of the lower class). NaN values are ignored; with fewer than two distinct values the result
    /// is (NaN, 0). On equal between-class variances the lowest threshold wins.
    /// </summary>
    /// <exception cref="ArgumentException">A value is infinite.</exception>
    public static (double Threshold, double Separability) Find(ReadOnlySpan<float> values) => Find(values, new double[values.Length]);

    /// <summary>
    /// As <see cref="Find(ReadOnlySpan{float})"/>, sorting in <paramref name="scratch"/> (at least as long as
    /// <paramref name="values"/>) instead of a new array: callers that split many units over a large image set
    /// reuse one buffer.
    /// </summary>
    public static (double Threshold, double Separability) Find(ReadOnlySpan<float> values, Span<double> scratch)
    {
        if (scratch.Length < values.Length) throw new ArgumentException("The scratch buffer is shorter than the values.", nameof(scratch));
        int count = 0;
        foreach (float v in values)
        {
            if (float.IsNaN(v)) continue;
            if (float.IsInfinity(v)) throw new ArgumentException("Values must be finite or NaN.", nameof(values));
            count++;
        }
        var sorted = scratch[..count];
        int i = 0;
        double sum = 0;
        foreach (float v in values)
        {
            if (float.IsNaN(v)) continue;
            sorted[i++] = v;
            sum += v;
        }
        sorted.Sort();
        if (count < 2 || sorted[0] == sorted[^1]) return (double.NaN, 0.0);

        // Centred values keep the sums of squares free of cancellation when the values sit far from 0.
        double mean = sum / count, total = 0, centredSum = 0;
        foreach (double x in sorted)
        {
            double c = x - mean;
            total += c * c;
            centredSum += c;
        }

        double best = -1, threshold = double.NaN, lowerSum = 0;
        for (int k = 1; k < count; k++)
        {
            lowerSum += sorted[k - 1] - mean;
            if (sorted[k - 1] == sorted[k]) continue; // a split only falls between distinct values
            double w0 = (double)k / count, w1 = 1 - w0;
            double gap = lowerSum / k - (centredSum - lowerSum) / (count - k);
            double between = w0 * w1 * gap * gap;
            if (between > best)
            {
                best = between;
                threshold = sorted[k - 1];
            }
        }
        return (threshold, Math.Clamp(best / (total / count), 0.0, 1.0));
    }
}
