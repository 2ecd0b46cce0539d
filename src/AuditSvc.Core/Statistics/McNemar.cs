namespace AuditSvc.Core.Statistics;

/// <summary>
/// McNemar's test on the discordant pairs of a paired binary outcome.
/// </summary>
/// <param name="TreatedOnly">Pairs where only the treated arm has the outcome (b).</param>
/// <param name="ControlOnly">Pairs where only the control arm has the outcome (c).</param>
/// <param name="ChiSquare">(b − c)²/(b + c) without continuity correction; 0 when b + c = 0.</param>
/// <param name="PAsymptotic">Two-sided p-value: the upper χ²₁ tail of <paramref name="ChiSquare"/>.</param>
/// <param name="PExact">Two-sided exact conditional binomial p-value; 1 when b + c = 0.</param>
public sealed record McNemarResult(int TreatedOnly, int ControlOnly, double ChiSquare, double PAsymptotic, double PExact);

/// <summary>
/// McNemar's test for paired proportions (Q. McNemar, Psychometrika 12 (1947) 153–157; Agresti,
/// Categorical Data Analysis, §10.1). Only the discordant pairs carry information: under "no
/// effect" each of the b + c of them falls either way with probability 1/2.
/// </summary>
public static class McNemar
{
    /// <summary>
    /// Tests b = <paramref name="treatedOnly"/> against c = <paramref name="controlOnly"/>. The exact
    /// p-value is min(1, 2·P(X ≤ min(b, c))) with X ~ Binomial(b + c, 1/2).
    /// </summary>
    public static McNemarResult Test(int treatedOnly, int controlOnly)
    {
        if (treatedOnly < 0) throw new ArgumentOutOfRangeException(nameof(treatedOnly), treatedOnly, "Counts must be >= 0.");
        if (controlOnly < 0) throw new ArgumentOutOfRangeException(nameof(controlOnly), controlOnly, "Counts must be >= 0.");
        int n = checked(treatedOnly + controlOnly);
        if (n == 0) return new McNemarResult(0, 0, 0.0, 1.0, 1.0);

        double diff = (double)treatedOnly - controlOnly;
        double chi = diff * diff / n;
        double exact = Math.Min(1.0, 2.0 * HalfBinomialLowerTail(n, Math.Min(treatedOnly, controlOnly)));
        return new McNemarResult(treatedOnly, controlOnly, chi, ChiSquare.UpperTail1Df(chi), exact);
    }

    // P(X ≤ k) for X ~ Binomial(n, 1/2) and k ≤ n/2. The terms only shrink going down from k, so
    // they are summed from k outward (no cancellation); the first comes from Loader's form, which
    // keeps its relative accuracy when n is large.
    private static double HalfBinomialLowerTail(int n, int k)
    {
        double term = Math.Exp(Loader.LogBinomialRaw(k, n, 0.5, 0.5)), sum = term;
        for (int j = k; j > 0 && term > sum * 1e-17; j--)
        {
            term *= j / (n - j + 1.0);
            sum += term;
        }
        return Math.Min(1.0, sum);
    }
}
