namespace AuditSvc.Core.Statistics;

/// <summary>One stratum's 2×2 table [[A, B], [C, D]]: rows are exposure yes/no, columns outcome yes/no.</summary>
public readonly record struct Table2x2(double A, double B, double C, double D)
{
    /// <summary>A + B + C + D.</summary>
    public double Total => A + B + C + D;
}

/// <summary>
/// Result of a Cochran–Mantel–Haenszel test.
/// </summary>
/// <param name="ChiSquare">The CMH statistic (1 df).</param>
/// <param name="PValue">Two-sided p-value from χ² with 1 df.</param>
/// <param name="CommonOddsRatio">Mantel–Haenszel estimate Σ(AD/n)/Σ(BC/n); NaN or ∞ when a sum is zero.</param>
/// <param name="OddsRatioLow">Lower 95% limit from the Robins–Breslow–Greenland variance of ln OR.</param>
/// <param name="OddsRatioHigh">Upper 95% limit.</param>
/// <param name="StrataUsed">Strata with at least two items.</param>
public sealed record CmhResult(
    double ChiSquare, double PValue, double CommonOddsRatio, double OddsRatioLow, double OddsRatioHigh, int StrataUsed);

/// <summary>
/// The Cochran–Mantel–Haenszel test of conditional independence in stratified 2×2 tables
/// (N. Mantel and W. Haenszel, J. Natl. Cancer Inst. 22 (1959) 719–748), the Mantel–Haenszel common
/// odds ratio, and its confidence interval from the variance of J. Robins, N. Breslow and
/// S. Greenland (Biometrics 42 (1986) 311–323), as R's <c>mantelhaen.test</c> reports them.
/// </summary>
public static class CochranMantelHaenszel
{
    /// <summary>
    /// Tests the strata; strata with fewer than two items carry no information and are skipped.
    /// The continuity correction subtracts 1/2 from |Σ(A − E[A])| when that is at least 1/2.
    /// </summary>
    public static CmhResult Test(ReadOnlySpan<Table2x2> strata, bool continuityCorrection = true)
    {
        double delta = 0, variance = 0;
        double r = 0, s = 0, pr = 0, psqr = 0, qs = 0; // sums for the odds ratio and its variance
        int used = 0;
        for (int k = 0; k < strata.Length; k++)
        {
            Table2x2 t = strata[k];
            if (t.A < 0 || t.B < 0 || t.C < 0 || t.D < 0 || !double.IsFinite(t.Total))
                throw new ArgumentException($"Stratum {k}: cells must be finite and >= 0.", nameof(strata));
            double n = t.Total;
            if (n < 2) continue;
            used++;
            double row1 = t.A + t.B, row2 = t.C + t.D, col1 = t.A + t.C, col2 = t.B + t.D;
            delta += t.A - row1 * col1 / n;
            variance += row1 * row2 * col1 * col2 / (n * n * (n - 1));

            double rk = t.A * t.D / n, sk = t.B * t.C / n;
            double pk = (t.A + t.D) / n, qk = (t.B + t.C) / n;
            r += rk;
            s += sk;
            pr += pk * rk;
            psqr += pk * sk + qk * rk;
            qs += qk * sk;
        }

        double chi = double.NaN, p = double.NaN;
        if (variance > 0)
        {
            double yates = continuityCorrection && Math.Abs(delta) >= 0.5 ? 0.5 : 0.0;
            double dev = Math.Abs(delta) - yates;
            chi = dev * dev / variance;
            p = ChiSquare.UpperTail1Df(chi);
        }

        double or = r / s;
        double low = double.NaN, high = double.NaN;
        if (r > 0 && s > 0)
        {
            double varLog = pr / (2 * r * r) + psqr / (2 * r * s) + qs / (2 * s * s);
            double half = Normal.Quantile(0.975) * Math.Sqrt(varLog);
            low = Math.Exp(Math.Log(or) - half);
            high = Math.Exp(Math.Log(or) + half);
        }
        return new CmhResult(chi, p, or, low, high, used);
    }
}
