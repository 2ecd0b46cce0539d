namespace AuditSvc.Core.Statistics;

/// <summary>
/// The Wilson score interval for a binomial proportion (E. B. Wilson, J. Am. Stat. Assoc. 22
/// (1927) 209–212), without continuity correction: method 3 of R. G. Newcombe, "Two-sided
/// confidence intervals for the single proportion", Statistics in Medicine 17 (1998) 857–872.
/// </summary>
public static class WilsonInterval
{
    /// <summary>Two-sided interval for successes/n at the given confidence; (0, 1) when n is 0.</summary>
    public static (double Low, double High) Compute(int successes, int n, double confidence = 0.95)
    {
        if (n < 0) throw new ArgumentOutOfRangeException(nameof(n), n, "n must be >= 0.");
        if (successes < 0 || successes > n) throw new ArgumentOutOfRangeException(nameof(successes), successes, "Successes must lie in 0..n.");
        if (!(confidence > 0 && confidence < 1)) throw new ArgumentOutOfRangeException(nameof(confidence), confidence, "Confidence must lie in (0, 1).");
        if (n == 0) return (0.0, 1.0);

        double z = Normal.Quantile(0.5 + 0.5 * confidence);
        double z2 = z * z;
        double p = (double)successes / n;
        double denominator = 1 + z2 / n;
        double centre = (p + z2 / (2.0 * n)) / denominator;
        double half = z / denominator * Math.Sqrt(p * (1 - p) / n + z2 / (4.0 * n * n));
        // At 0 and n one limit is exactly 0 or 1; rounding should not move it.
        double low = successes == 0 ? 0.0 : Math.Max(0.0, centre - half);
        double high = successes == n ? 1.0 : Math.Min(1.0, centre + half);
        return (low, high);
    }
}
