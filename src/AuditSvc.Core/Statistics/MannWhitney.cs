namespace AuditSvc.Core.Statistics;

/// <summary>
/// Result of a one-sided Wilcoxon–Mann–Whitney test that x tends to be greater than y.
/// </summary>
/// <param name="U">Mann–Whitney U of x: pairs (x, y) with x &gt; y, ties counting one half.</param>
/// <param name="Auroc">U/(m·n): the probability that a random x exceeds a random y (ties one half).</param>
/// <param name="Z">(U − mn/2)/σ with the tie-corrected σ, no continuity correction.</param>
/// <param name="PValue">Normal approximation without continuity correction.</param>
/// <param name="PValueContinuity">Normal approximation with continuity correction (U − mn/2 − 1/2).</param>
/// <param name="PValueExact">Exact P(U ≥ u) under the null when there are no ties and m·n ≤ 400; otherwise null.</param>
/// <param name="M">Size of x.</param>
/// <param name="N">Size of y.</param>
public sealed record MannWhitneyResult(
    double U, double Auroc, double Z, double PValue, double PValueContinuity, double? PValueExact, int M, int N);

/// <summary>
/// The Wilcoxon rank-sum / Mann–Whitney test (Mann &amp; Whitney 1947; Hollander &amp; Wolfe,
/// Nonparametric Statistical Methods, 1973, §4.1), one-sided: x greater. Mid-ranks for ties and the
/// usual tie-corrected variance. For one comparison at a time; the audit's bulk path is
/// <see cref="VanElteren.Combine"/> over precomputed rank sums.
/// </summary>
public static class MannWhitney
{
    /// <summary>Largest m·n for which the exact null distribution is computed.</summary>
    public const int ExactLimit = 400;

    /// <summary>Tests whether <paramref name="x"/> tends to exceed <paramref name="y"/>.</summary>
    public static MannWhitneyResult Test(ReadOnlySpan<double> x, ReadOnlySpan<double> y)
    {
        int m = x.Length, n = y.Length;
        if (m == 0 || n == 0) throw new ArgumentException("Both samples need at least one value.");
        int total = m + n;
        (double rankSumX, double tieTerm) = RankSum(x, y);

        double u = rankSumX - m * (m + 1) / 2.0;
        double mn = (double)m * n;
        double mean = mn / 2;
        double variance = mn / 12.0 * (total + 1 - tieTerm / ((double)total * (total - 1)));
        double z = 0, p = 1, pc = 1;
        if (variance > 0)
        {
            double sd = Math.Sqrt(variance);
            z = (u - mean) / sd;
            p = Normal.UpperTail(z);
            pc = Normal.UpperTail((u - mean - 0.5) / sd);
        }
        double? exact = tieTerm == 0 && mn <= ExactLimit ? ExactUpperTail(m, n, (int)Math.Round(u)) : null;
        return new MannWhitneyResult(u, u / mn, z, p, pc, exact, m, n);
    }

    /// <summary>
    /// Exact P(U ≥ u) for samples of size m and n without ties: the counts of U are the coefficients
    /// of the Gaussian binomial Π_{i=1..m} (1 − q^{n+i})/(1 − q^i).
    /// </summary>
    public static double ExactUpperTail(int m, int n, int u)
    {
        if (m < 1 || n < 1) throw new ArgumentOutOfRangeException(nameof(m), "Sample sizes must be >= 1.");
        if ((long)m * n > 100_000) throw new ArgumentOutOfRangeException(nameof(m), "Exact distribution is only for small samples.");
        int max = m * n;
        if (u <= 0) return 1.0;
        if (u > max) return 0.0;
        var counts = new double[max + 1];
        counts[0] = 1;
        int degree = 0;
        for (int i = 1; i <= m; i++)
        {
            // Multiply by (1 − q^{n+i}), then divide by (1 − q^i) (a running sum with stride i).
            int shift = n + i;
            int newDegree = degree + n;
            for (int k = Math.Min(max, degree + shift); k >= shift; k--) counts[k] -= counts[k - shift];
            // Run the division over the whole product so its (exactly zero) high terms are cleared.
            int top = Math.Min(max, degree + shift);
            for (int k = i; k <= top; k++) counts[k] += counts[k - i];
            degree = newDegree;
        }
        double all = 0, tail = 0;
        for (int k = 0; k <= max; k++)
        {
            all += counts[k];
            if (k >= u) tail += counts[k];
        }
        return tail / all;
    }

    // Mid-rank sum of x in the pooled sample, and Σ(t³ − t) over tie groups.
    private static (double RankSum, double TieTerm) RankSum(ReadOnlySpan<double> x, ReadOnlySpan<double> y)
    {
        int m = x.Length, total = x.Length + y.Length;
        var keys = new double[total];
        var index = new int[total];
        for (int i = 0; i < total; i++)
        {
            keys[i] = i < m ? x[i] : y[i - m];
            if (double.IsNaN(keys[i])) throw new ArgumentException($"Value {i} is NaN.");
            index[i] = i;
        }
        Array.Sort(keys, index);
        double rankSum = 0, tieTerm = 0;
        int start = 0;
        while (start < total)
        {
            int end = start + 1;
            while (end < total && keys[end] == keys[start]) end++;
            double mid = 0.5 * (start + 1 + end);
            for (int k = start; k < end; k++) if (index[k] < m) rankSum += mid;
            double t = end - start;
            tieTerm += t * t * t - t;
            start = end;
        }
        return (rankSum, tieTerm);
    }
}
