namespace AuditSvc.Core.Statistics;

/// <summary>
/// Newcombe's hybrid score ("square-and-add") intervals for a difference of two proportions, built
/// from the Wilson intervals of the two proportions (<see cref="WilsonInterval"/>). Unlike the Wald
/// interval they keep their width when a proportion is 0 or 1.
/// </summary>
public static class NewcombeInterval
{
    /// <summary>
    /// Method 10 of R. G. Newcombe, "Interval estimation for the difference between independent
    /// proportions: comparison of eleven methods", Statistics in Medicine 17 (1998) 873–890, for
    /// x1/n1 − x2/n2. (−1, 1) when either sample is empty.
    /// </summary>
    public static (double Low, double High) Unpaired(int x1, int n1, int x2, int n2, double confidence = 0.95)
    {
        CheckCount(x1, n1, nameof(x1), nameof(n1));
        CheckCount(x2, n2, nameof(x2), nameof(n2));
        CheckConfidence(confidence);
        if (n1 == 0 || n2 == 0) return (-1.0, 1.0);

        double p1 = (double)x1 / n1, p2 = (double)x2 / n2;
        var (l1, u1) = WilsonInterval.Compute(x1, n1, confidence);
        var (l2, u2) = WilsonInterval.Compute(x2, n2, confidence);
        double d = p1 - p2;
        double low = d - Math.Sqrt(Square(p1 - l1) + Square(u2 - p2));
        double high = d + Math.Sqrt(Square(u1 - p1) + Square(p2 - l2));
        return (Math.Max(-1.0, low), Math.Min(1.0, high));
    }

    /// <summary>
    /// Method 10 of R. G. Newcombe, "Improved confidence intervals for the difference between binomial
    /// proportions based on paired data", Statistics in Medicine 17 (1998) 2635–2650, for the paired
    /// difference (b − c)/n of the table a = both yes, b = first yes only, c = second yes only,
    /// d = both no. (−1, 1) when the table is empty.
    /// </summary>
    public static (double Low, double High) Paired(int a, int b, int c, int d, double confidence = 0.95)
    {
        if (a < 0 || b < 0 || c < 0 || d < 0) throw new ArgumentOutOfRangeException(nameof(a), "Table cells must be >= 0.");
        CheckConfidence(confidence);
        int n = checked(a + b + c + d);
        if (n == 0) return (-1.0, 1.0);

        int first = a + b, second = a + c;
        double p1 = (double)first / n, p2 = (double)second / n;
        var (l1, u1) = WilsonInterval.Compute(first, n, confidence);
        var (l2, u2) = WilsonInterval.Compute(second, n, confidence);
        double phi = CorrectedPhi(a, b, c, d);

        double diff = (double)(b - c) / n;
        double dl1 = p1 - l1, du1 = u1 - p1, dl2 = p2 - l2, du2 = u2 - p2;
        // With φ ≤ 1 each radicand is at least (x − y)² ≥ 0; the Max only absorbs rounding.
        double low = diff - Math.Sqrt(Math.Max(0.0, dl1 * dl1 - 2 * phi * dl1 * du2 + du2 * du2));
        double high = diff + Math.Sqrt(Math.Max(0.0, du1 * du1 - 2 * phi * du1 * dl2 + dl2 * dl2));
        return (Math.Max(-1.0, low), Math.Min(1.0, high));
    }

    // Newcombe's correlation of the two margins, φ = (ad − bc)/√(efgh) over the margin totals e..h,
    // with his correction: a positive ad − bc is reduced by n/2 and not below 0, a negative one is
    // left as it is. The shrinkage keeps φ below 1, so the interval never collapses when b = c = 0.
    // φ is 0 when a margin is empty (the product-moment correlation is undefined there).
    private static double CorrectedPhi(int a, int b, int c, int d)
    {
        double n = (double)a + b + c + d;
        double margins = ((double)a + b) * ((double)c + d) * ((double)a + c) * ((double)b + d);
        if (margins == 0) return 0.0;
        double cross = (double)a * d - (double)b * c;
        double corrected = cross > n / 2 ? cross - n / 2 : cross >= 0 ? 0.0 : cross;
        return corrected / Math.Sqrt(margins);
    }

    private static double Square(double x) => x * x;

    private static void CheckCount(int x, int n, string xName, string nName)
    {
        if (n < 0) throw new ArgumentOutOfRangeException(nName, n, "n must be >= 0.");
        if (x < 0 || x > n) throw new ArgumentOutOfRangeException(xName, x, "Successes must lie in 0..n.");
    }

    private static void CheckConfidence(double confidence)
    {
        if (!(confidence > 0 && confidence < 1)) throw new ArgumentOutOfRangeException(nameof(confidence), confidence, "Confidence must lie in (0, 1).");
    }
}
