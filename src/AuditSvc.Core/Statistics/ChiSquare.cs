namespace AuditSvc.Core.Statistics;

/// <summary>Upper tail probabilities of the χ² distribution.</summary>
public static class ChiSquare
{
    /// <summary>P(χ²₁ ≥ x) = 2·(1 − Φ(√x)), through erfc so small p-values keep their digits.</summary>
    public static double UpperTail1Df(double x)
    {
        if (double.IsNaN(x)) return double.NaN;
        if (x <= 0) return 1.0;
        return SpecialFunctions.Erfc(Math.Sqrt(0.5 * x));
    }

    /// <summary>P(χ²_df ≥ x) = Q(df/2, x/2), the regularized upper incomplete gamma function.</summary>
    public static double UpperTail(double x, int df)
    {
        if (df < 1) throw new ArgumentOutOfRangeException(nameof(df), df, "Degrees of freedom must be >= 1.");
        if (double.IsNaN(x)) return double.NaN;
        if (x <= 0) return 1.0;
        return df == 1 ? UpperTail1Df(x) : SpecialFunctions.RegularizedGammaQ(0.5 * df, 0.5 * x);
    }
}
