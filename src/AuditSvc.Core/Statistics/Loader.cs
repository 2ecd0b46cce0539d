namespace AuditSvc.Core.Statistics;

// C. Loader (2000), "Fast and accurate computation of binomial probabilities": the binomial mass
// written through the Stirling remainder and the deviance term bd0, both computed without
// cancellation, so even terms of huge factorials keep full relative precision.
internal static class Loader
{
    private const double LogTwoPi = 1.83787706640934548356;
    private static readonly double[] SmallStirlingError = BuildSmallTable();

    // ln of the binomial mass dbinom(x; n, p) with q = 1 − p given separately (no rounding in 1 − p).
    public static double LogBinomialRaw(int x, int n, double p, double q)
    {
        if (x == 0)
        {
            if (n == 0) return 0.0;
            return p < 0.1 ? -Bd0(n, n * q) - n * p : n * Math.Log(q);
        }
        if (x == n) return q < 0.1 ? -Bd0(n, n * p) - n * q : n * Math.Log(p);
        double lc = StirlingError(n) - StirlingError(x) - StirlingError(n - x) - Bd0(x, n * p) - Bd0(n - x, n * q);
        double lf = LogTwoPi + Math.Log(x) + Math.Log(n - x) - Math.Log(n);
        return lc - 0.5 * lf;
    }

    // ln(n!) − [(n + 1/2) ln n − n + ln √(2π)].
    public static double StirlingError(int n)
    {
        if (n < SmallStirlingError.Length) return SmallStirlingError[n];
        const double s0 = 1.0 / 12, s1 = 1.0 / 360, s2 = 1.0 / 1260, s3 = 1.0 / 1680, s4 = 1.0 / 1188;
        double nn = (double)n * n;
        if (n > 500) return (s0 - s1 / nn) / n;
        if (n > 80) return (s0 - (s1 - s2 / nn) / nn) / n;
        if (n > 35) return (s0 - (s1 - (s2 - s3 / nn) / nn) / nn) / n;
        return (s0 - (s1 - (s2 - (s3 - s4 / nn) / nn) / nn) / nn) / n;
    }

    // x ln(x/np) + np − x, by a series in v = (x − np)/(x + np) when x is close to np.
    public static double Bd0(double x, double np)
    {
        if (Math.Abs(x - np) < 0.1 * (x + np))
        {
            double v = (x - np) / (x + np);
            double s = (x - np) * v, ej = 2 * x * v, v2 = v * v;
            for (int j = 1; j < 1000; j++)
            {
                ej *= v2;
                double next = s + ej / (2 * j + 1);
                if (next == s) return next;
                s = next;
            }
            return s;
        }
        return x * Math.Log(x / np) + np - x;
    }

    // For small n the series is not yet accurate; there ln(n!) is summed exactly enough in double.
    private static double[] BuildSmallTable()
    {
        var table = new double[16];
        double logFactorial = 0;
        for (int n = 1; n < table.Length; n++)
        {
            logFactorial += Math.Log(n);
            table[n] = logFactorial - ((n + 0.5) * Math.Log(n) - n + 0.5 * LogTwoPi);
        }
        return table;
    }
}
