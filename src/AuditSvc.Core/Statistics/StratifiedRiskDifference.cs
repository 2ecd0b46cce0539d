namespace AuditSvc.Core.Statistics;

/// <summary>One stratum of a two-group comparison: <paramref name="X1"/> of <paramref name="N1"/> in group 1, <paramref name="X2"/> of <paramref name="N2"/> in group 2.</summary>
public readonly record struct BinomialPair(int X1, int N1, int X2, int N2);

/// <summary>
/// A common risk difference across strata with its score test and score interval.
/// </summary>
/// <param name="Estimate">Mantel–Haenszel weighted difference Σ w_k (p1k − p2k) / Σ w_k.</param>
/// <param name="Low">Lower limit of the score interval, at least −1.</param>
/// <param name="High">Upper limit of the score interval, at most 1.</param>
/// <param name="Z">The score statistic T(0); positive when group 1 has the higher proportion.</param>
/// <param name="PValue">Two-sided normal p-value of <paramref name="Z"/>.</param>
/// <param name="StrataUsed">Strata with both groups non-empty.</param>
public sealed record RiskDifferenceResult(double Estimate, double Low, double High, double Z, double PValue, int StrataUsed);

/// <summary>
/// The Mantel–Haenszel common risk difference (weights w_k = n1k·n2k/(n1k + n2k); Greenland &amp; Robins,
/// Biometrics 41 (1985) 55–68) with a stratified score test and the interval that inverts it:
/// T(δ) = Σ w_k (p1k − p2k − δ) / √(Σ w_k² V_k(δ)), V_k(δ) = p̃1k(1 − p̃1k)/n1k + p̃2k(1 − p̃2k)/n2k, where
/// p̃ are the maximum-likelihood proportions of stratum k restricted to p1 − p2 = δ (closed form of
/// O. Miettinen and M. Nurminen, Statistics in Medicine 4 (1985) 213–226, as written by C. P.
/// Farrington and G. Manning, Statistics in Medicine 9 (1990) 1447–1454). There is no n/(n − 1)
/// factor, so one stratum gives Mee's interval and T(0)² is Pearson's χ² of the 2×2 table.
/// </summary>
/// <remarks>
/// The interval is {δ ∈ [−1, 1] : |T(δ)| ≤ z}, its ends found by bisection on each side of the
/// estimate. A score interval keeps its width when a group's proportion is 0 or 1, where a Wald
/// interval collapses; and because the test and the interval are the same statistic, the interval
/// excludes 0 exactly when the test rejects at 1 − confidence.
/// </remarks>
public static class StratifiedRiskDifference
{
    // Bisection stops when the bracket is this narrow; T is then within rounding of z.
    private const double Resolution = 1e-15;

    private readonly record struct Stratum(double X1, double N1, double X2, double N2, double W, double F = 1)
    {
        public double P1 => X1 / N1;
        public double P2 => X2 / N2;
    }

    /// <summary>
    /// Estimates, tests and brackets the common difference group 1 − group 2. Strata with an empty
    /// group are skipped; null when none is left.
    /// </summary>
    /// <param name="sampleSizeFactor">
    /// Multiply each stratum's variance by n/(n − 1), n = n1 + n2, as Miettinen &amp; Nurminen's own statistic does: with
    /// many small strata the plain statistic rejects a little too often (measured in the null simulations), and the
    /// factor brings it back; with one large stratum it changes nothing that matters.
    /// </param>
    public static RiskDifferenceResult? Compute(IReadOnlyList<BinomialPair> strata, double confidence = 0.95, bool sampleSizeFactor = false)
    {
        ArgumentNullException.ThrowIfNull(strata);
        if (!(confidence > 0 && confidence < 1)) throw new ArgumentOutOfRangeException(nameof(confidence), confidence, "Confidence must lie in (0, 1).");

        var used = new List<Stratum>(strata.Count);
        double sumW = 0, sumWd = 0;
        for (int k = 0; k < strata.Count; k++)
        {
            var s = strata[k];
            if (s.N1 < 0 || s.N2 < 0 || s.X1 < 0 || s.X2 < 0 || s.X1 > s.N1 || s.X2 > s.N2)
                throw new ArgumentException($"Stratum {k}: counts must satisfy 0 <= X <= N (got {s}).", nameof(strata));
            if (s.N1 == 0 || s.N2 == 0) continue;
            double n1 = s.N1, n2 = s.N2;
            double f = sampleSizeFactor && n1 + n2 > 1 ? (n1 + n2) / (n1 + n2 - 1) : 1;
            var stratum = new Stratum(s.X1, n1, s.X2, n2, n1 * n2 / (n1 + n2), f);
            used.Add(stratum);
            sumW += stratum.W;
            sumWd += stratum.W * (stratum.P1 - stratum.P2);
        }
        if (used.Count == 0) return null;

        double estimate = Math.Clamp(sumWd / sumW, -1.0, 1.0);
        double z0 = Score(used, 0.0);
        double p = Math.Min(1.0, 2.0 * Normal.UpperTail(Math.Abs(z0)));
        double critical = Normal.Quantile(0.5 + 0.5 * confidence);
        double low = LowerLimit(used, estimate, critical);
        double high = UpperLimit(used, estimate, critical);
        return new RiskDifferenceResult(estimate, low, high, z0, p, used.Count);
    }

    // Smallest δ ≤ estimate with T(δ) ≤ z. The bracket keeps T(lo) > z ≥ T(hi). When 0 lies inside it,
    // 0 is tried first, so Low > 0 exactly when T(0) > z: the interval and the p-value cannot disagree.
    private static double LowerLimit(List<Stratum> strata, double estimate, double critical)
    {
        if (estimate <= -1.0) return -1.0;
        double lo = -1.0, hi = estimate;
        if (lo < 0 && 0 < hi)
        {
            if (Score(strata, 0.0) > critical) lo = 0.0;
            else hi = 0.0;
        }
        while (hi - lo > Resolution)
        {
            double mid = lo + 0.5 * (hi - lo);
            if (Score(strata, mid) > critical) lo = mid;
            else hi = mid;
        }
        return hi;
    }

    // Largest δ ≥ estimate with T(δ) ≥ −z; the mirror image of LowerLimit.
    private static double UpperLimit(List<Stratum> strata, double estimate, double critical)
    {
        if (estimate >= 1.0) return 1.0;
        double lo = estimate, hi = 1.0;
        if (lo < 0 && 0 < hi)
        {
            if (Score(strata, 0.0) < -critical) hi = 0.0;
            else lo = 0.0;
        }
        while (hi - lo > Resolution)
        {
            double mid = lo + 0.5 * (hi - lo);
            if (Score(strata, mid) < -critical) hi = mid;
            else lo = mid;
        }
        return lo;
    }

    // T(δ). A zero numerator counts as T = 0 even when the variance is 0 too (every stratum at the
    // same edge as δ); a non-zero numerator over zero variance is ±∞ (δ = ±1 away from the estimate).
    private static double Score(List<Stratum> strata, double delta)
    {
        double numerator = 0, variance = 0;
        foreach (var s in strata)
        {
            numerator += s.W * (s.P1 - s.P2 - delta);
            var (q1, q2) = RestrictedProportions(s, delta);
            variance += s.W * s.W * s.F * (q1 * (1 - q1) / s.N1 + q2 * (1 - q2) / s.N2);
        }
        if (numerator == 0) return 0.0;
        if (variance <= 0) return numerator > 0 ? double.PositiveInfinity : double.NegativeInfinity;
        return numerator / Math.Sqrt(variance);
    }

    // The maximum-likelihood (p1, p2) of one stratum under p1 − p2 = δ. The closed form is
    // Farrington and Manning's trigonometric root of the likelihood equation's cubic. When the answer
    // lies at or near the edge of the parameter space (a group at 0 or 1, common here) that cubic has
    // a double root there and the closed form keeps only about half the digits, so the root is
    // settled on the likelihood equation itself: at an edge when the slope says so, otherwise by a
    // few safeguarded Newton steps from the closed form.
    private static (double P1, double P2) RestrictedProportions(Stratum s, double delta)
    {
        if (delta >= 1.0) return (1.0, 0.0);
        if (delta <= -1.0) return (0.0, 1.0);
        double lo = Math.Max(0.0, -delta), hi = Math.Min(1.0, 1.0 - delta);

        // The log-likelihood is concave in p2, so its slope falls through at most one root.
        if (Slope(s, delta, lo) <= 0) return (lo + delta, lo);
        if (Slope(s, delta, hi) >= 0) return (hi + delta, hi);

        double p2 = ClosedFormP1(s, delta) - delta;
        double a = lo, b = hi;
        for (int i = 0; i < 100; i++)
        {
            if (!(p2 > a && p2 < b)) p2 = a + 0.5 * (b - a);
            double g = Slope(s, delta, p2);
            if (g == 0) break;
            if (g > 0) a = p2;
            else b = p2;
            double step = g / SlopeDerivative(s, delta, p2);
            p2 -= step;
            if (Math.Abs(step) <= 1e-15 * p2 || b - a <= 1e-15 * b) break;
        }
        p2 = Math.Clamp(p2, lo, hi);
        return (p2 + delta, p2);
    }

    // d/dp2 of the stratum's log-likelihood with p1 = p2 + δ. Terms of empty cells are left out, so at
    // an edge the slope is finite or +∞ at the lower end and finite or −∞ at the upper end, never NaN.
    private static double Slope(Stratum s, double delta, double p2)
    {
        double p1 = p2 + delta, g = 0;
        if (s.X1 > 0) g += s.X1 / p1;
        if (s.X1 < s.N1) g -= (s.N1 - s.X1) / (1 - p1);
        if (s.X2 > 0) g += s.X2 / p2;
        if (s.X2 < s.N2) g -= (s.N2 - s.X2) / (1 - p2);
        return g;
    }

    private static double SlopeDerivative(Stratum s, double delta, double p2)
    {
        double p1 = p2 + delta, q1 = 1 - p1, q2 = 1 - p2;
        return -s.X1 / (p1 * p1) - (s.N1 - s.X1) / (q1 * q1) - s.X2 / (p2 * p2) - (s.N2 - s.X2) / (q2 * q2);
    }

    // Miettinen & Nurminen (1985) / Farrington & Manning (1990): with θ = n2/n1 the restricted p1 is
    // the root 2u·cos(w) − b/(3a) of a·p³ + b·p² + c·p + d = 0.
    private static double ClosedFormP1(Stratum s, double delta)
    {
        double theta = s.N2 / s.N1, p1 = s.P1, p2 = s.P2;
        double a = 1 + theta;
        double b = -(1 + theta + p1 + theta * p2 + delta * (theta + 2));
        double c = delta * delta + delta * (2 * p1 + theta + 1) + p1 + theta * p2;
        double d = -p1 * delta * (1 + delta);
        double b3a = b / (3 * a);
        double v = b3a * b3a * b3a - b * c / (6 * a * a) + d / (2 * a);
        double u = Math.Sqrt(Math.Max(0.0, b3a * b3a - c / (3 * a)));
        if (v < 0) u = -u;
        if (u == 0) return -b3a;
        // Rounding can push the cosine's argument a hair outside [−1, 1].
        double w = (Math.PI + Math.Acos(Math.Clamp(v / (u * u * u), -1.0, 1.0))) / 3;
        return 2 * u * Math.Cos(w) - b3a;
    }
}
