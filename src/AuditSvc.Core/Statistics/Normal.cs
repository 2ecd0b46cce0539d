namespace AuditSvc.Core.Statistics;

/// <summary>
/// The standard normal distribution. Tail probabilities go through Cody's erfc
/// (<see cref="SpecialFunctions.Erfc"/>), so they keep their relative accuracy far out
/// (|z| up to about 37); the quantile is P. J. Acklam's rational approximation (2003) polished
/// by one Halley step, which brings it to full double precision.
/// </summary>
public static class Normal
{
    private const double InvSqrt2 = 0.70710678118654752440;
    private const double Sqrt2Pi = 2.50662827463100050242;

    private static readonly double[] Qa =
        [-3.969683028665376e+01, 2.209460984245205e+02, -2.759285104469687e+02, 1.383577518672690e+02,
         -3.066479806614716e+01, 2.506628277459239e+00];
    private static readonly double[] Qb =
        [-5.447609879822406e+01, 1.615858368580409e+02, -1.556989798598866e+02, 6.680131188771972e+01,
         -1.328068155288572e+01];
    private static readonly double[] Qc =
        [-7.784894002430293e-03, -3.223964580411365e-01, -2.400758277161838e+00, -2.549732539343734e+00,
         4.374664141464968e+00, 2.938163982698783e+00];
    private static readonly double[] Qd =
        [7.784695709041462e-03, 3.224671290700398e-01, 2.445134137142996e+00, 3.754408661907416e+00];

    /// <summary>Φ(z) = P(Z ≤ z).</summary>
    public static double Cdf(double z) => 0.5 * SpecialFunctions.Erfc(-z * InvSqrt2);

    /// <summary>1 − Φ(z) = P(Z &gt; z), accurate in relative terms for large z.</summary>
    public static double UpperTail(double z) => 0.5 * SpecialFunctions.Erfc(z * InvSqrt2);

    /// <summary>The density φ(z).</summary>
    public static double Pdf(double z) => Math.Exp(-0.5 * z * z) / Sqrt2Pi;

    /// <summary>Φ⁻¹(p) for 0 ≤ p ≤ 1 (±∞ at the ends).</summary>
    public static double Quantile(double p)
    {
        if (double.IsNaN(p) || p < 0 || p > 1) throw new ArgumentOutOfRangeException(nameof(p), p, "A probability must lie in [0, 1].");
        if (p == 0) return double.NegativeInfinity;
        if (p == 1) return double.PositiveInfinity;

        const double low = 0.02425;
        double x;
        if (p < low)
        {
            double q = Math.Sqrt(-2 * Math.Log(p));
            x = Tail(q);
        }
        else if (p <= 1 - low)
        {
            double q = p - 0.5, r = q * q;
            x = (((((Qa[0] * r + Qa[1]) * r + Qa[2]) * r + Qa[3]) * r + Qa[4]) * r + Qa[5]) * q /
                (((((Qb[0] * r + Qb[1]) * r + Qb[2]) * r + Qb[3]) * r + Qb[4]) * r + 1);
        }
        else
        {
            double q = Math.Sqrt(-2 * Math.Log(1 - p));
            x = -Tail(q);
        }

        // One Halley step. For p > 1/2, 1 − p is exact, so the error is taken on the upper tail.
        double e = p <= 0.5 ? Cdf(x) - p : (1 - p) - UpperTail(x);
        double u = e * Sqrt2Pi * Math.Exp(0.5 * x * x);
        return x - u / (1 + 0.5 * x * u);
    }

    private static double Tail(double q) =>
        (((((Qc[0] * q + Qc[1]) * q + Qc[2]) * q + Qc[3]) * q + Qc[4]) * q + Qc[5]) /
        ((((Qd[0] * q + Qd[1]) * q + Qd[2]) * q + Qd[3]) * q + 1);
}
