namespace AuditSvc.Core.Statistics;

/// <summary>
/// The Benjamini–Hochberg step-up procedure controlling the false discovery rate
/// (Y. Benjamini and Y. Hochberg, J. R. Statist. Soc. B 57 (1995) 289–300).
/// </summary>
public static class BenjaminiHochberg
{
    /// <summary>
    /// Adjusted p-values (q-values) in the input order: q_(i) = min_{j ≥ i} p_(j)·m/j, capped at 1.
    /// Rejecting every q ≤ α is the same as the step-up procedure at level α.
    /// </summary>
    public static double[] Adjust(ReadOnlySpan<double> p)
    {
        int m = p.Length;
        var q = new double[m];
        if (m == 0) return q;
        var sorted = new double[m];
        var order = new int[m];
        for (int i = 0; i < m; i++)
        {
            sorted[i] = Check(p[i], i);
            order[i] = i;
        }
        Array.Sort(sorted, order);
        double running = 1.0;
        for (int k = m - 1; k >= 0; k--)
        {
            running = Math.Min(running, sorted[k] * m / (k + 1));
            q[order[k]] = running;
        }
        return q;
    }

    /// <summary>The number of hypotheses the step-up procedure rejects at level <paramref name="alpha"/>.</summary>
    public static int Rejections(ReadOnlySpan<double> p, double alpha)
    {
        if (!(alpha >= 0 && alpha <= 1)) throw new ArgumentOutOfRangeException(nameof(alpha), alpha, "alpha must lie in [0, 1].");
        int m = p.Length;
        var sorted = new double[m];
        for (int i = 0; i < m; i++) sorted[i] = Check(p[i], i);
        Array.Sort(sorted);
        for (int k = m; k >= 1; k--)
        {
            if (sorted[k - 1] <= k * alpha / m) return k;
        }
        return 0;
    }

    private static double Check(double p, int index) =>
        p is >= 0 and <= 1 ? p : throw new ArgumentException($"p-value {index} is {p}; p-values must lie in [0, 1].", nameof(p));
}
