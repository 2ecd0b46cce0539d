namespace AuditSvc.Core.Statistics;

/// <summary>
/// The hypergeometric distribution: X successes among <c>draws</c> items drawn without replacement
/// from <c>population</c> items of which <c>successes</c> are successes. The mass function uses
/// C. Loader's saddle-point form ("Fast and accurate computation of binomial probabilities", 2000),
/// which avoids the cancellation of large log-factorials; tails are summed outward from the start
/// term by the ratio of neighbouring terms, so every summand is positive and no term is lost.
/// </summary>
public static class Hypergeometric
{
    /// <summary>P(X = k).</summary>
    public static double Pmf(int population, int successes, int draws, int k)
    {
        Check(population, successes, draws);
        if (k < Math.Max(0, draws - (population - successes)) || k > Math.Min(successes, draws)) return 0.0;
        return Math.Exp(LogPmf(population, successes, draws, k));
    }

    /// <summary>P(X ≥ observed).</summary>
    public static double UpperTail(int population, int successes, int draws, int observed)
    {
        Check(population, successes, draws);
        int lo = Math.Max(0, draws - (population - successes)), hi = Math.Min(successes, draws);
        if (observed <= lo) return 1.0;
        if (observed > hi) return 0.0;
        int mode = (int)((draws + 1.0) * (successes + 1.0) / (population + 2.0));
        // Above the mode the terms fall away from `observed`; at or below it, the complement's do.
        return observed > mode
            ? SumUpward(population, successes, draws, observed, hi)
            : Math.Max(0.0, 1.0 - SumDownward(population, successes, draws, observed - 1, lo));
    }

    /// <summary>P(X ≤ observed).</summary>
    public static double LowerTail(int population, int successes, int draws, int observed)
    {
        Check(population, successes, draws);
        int lo = Math.Max(0, draws - (population - successes)), hi = Math.Min(successes, draws);
        if (observed < lo) return 0.0;
        if (observed >= hi) return 1.0;
        int mode = (int)((draws + 1.0) * (successes + 1.0) / (population + 2.0));
        return observed < mode
            ? SumDownward(population, successes, draws, observed, lo)
            : Math.Max(0.0, 1.0 - SumUpward(population, successes, draws, observed + 1, hi));
    }

    private static double SumUpward(int population, int successes, int draws, int from, int hi)
    {
        double term = Math.Exp(LogPmf(population, successes, draws, from)), sum = term;
        int failures = population - successes;
        for (int k = from; k < hi && term > sum * 1e-17; k++)
        {
            term *= (double)(successes - k) * (draws - k) / ((k + 1.0) * (failures - draws + k + 1.0));
            sum += term;
        }
        return Math.Min(1.0, sum);
    }

    private static double SumDownward(int population, int successes, int draws, int from, int lo)
    {
        double term = Math.Exp(LogPmf(population, successes, draws, from)), sum = term;
        int failures = population - successes;
        for (int k = from; k > lo && term > sum * 1e-17; k--)
        {
            term *= k * (failures - draws + (double)k) / ((successes - k + 1.0) * (draws - k + 1.0));
            sum += term;
        }
        return Math.Min(1.0, sum);
    }

    // ln P(X = k) as binomial terms at p = draws/population, each in Loader's deviance form.
    internal static double LogPmf(int population, int successes, int draws, int k)
    {
        double p = (double)draws / population, q = (double)(population - draws) / population;
        return Loader.LogBinomialRaw(k, successes, p, q)
             + Loader.LogBinomialRaw(draws - k, population - successes, p, q)
             - Loader.LogBinomialRaw(draws, population, p, q);
    }

    private static void Check(int population, int successes, int draws)
    {
        if (population < 0) throw new ArgumentOutOfRangeException(nameof(population), population, "The population must be >= 0.");
        if (successes < 0 || successes > population) throw new ArgumentOutOfRangeException(nameof(successes), successes, "Successes must lie in 0..population.");
        if (draws < 0 || draws > population) throw new ArgumentOutOfRangeException(nameof(draws), draws, "Draws must lie in 0..population.");
    }
}

/// <summary>
/// One-sided Fisher exact test for a 2×2 table [[a, b], [c, d]] (R. A. Fisher, The Design of
/// Experiments, 1935; Agresti, Categorical Data Analysis, 2002, §3.5).
/// </summary>
public static class FisherExact
{
    /// <summary>
    /// P-value for an odds ratio above 1: P(X ≥ a) with the margins fixed, X hypergeometric with
    /// population a+b+c+d, successes a+c (first column) and draws a+b (first row).
    /// </summary>
    public static double Greater(int a, int b, int c, int d)
    {
        if (a < 0 || b < 0 || c < 0 || d < 0) throw new ArgumentOutOfRangeException(nameof(a), "Table cells must be >= 0.");
        return Hypergeometric.UpperTail(a + b + c + d, a + c, a + b, a);
    }
}
