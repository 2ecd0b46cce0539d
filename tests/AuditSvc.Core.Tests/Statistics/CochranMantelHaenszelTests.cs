using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Tests.Statistics;

public class CochranMantelHaenszelTests
{
    // Penicillin and rabbits (Agresti, Categorical Data Analysis; R's mantelhaen.test example).
    private static readonly Table2x2[] Rabbits =
        [new(0, 6, 0, 5), new(3, 3, 0, 6), new(6, 0, 2, 4), new(5, 1, 6, 0), new(2, 0, 5, 0)];

    [Fact]
    public void Test_PenicillinWithCorrection_MatchesR()
    {
        var r = CochranMantelHaenszel.Test(Rabbits);
        Close.To(3.9286, r.ChiSquare, 0, 5e-5);      // R mantelhaen.test: X² = 3.9286
        Close.To(0.04747, r.PValue, 0, 5e-6);        // R: p = 0.04747
        Close.To(7.0, r.CommonOddsRatio, 1e-14);     // R: common odds ratio 7
        Close.To(1.026713, r.OddsRatioLow, 0, 5e-7); // R: 95% CI 1.026713 47.725133
        Close.To(47.725133, r.OddsRatioHigh, 0, 5e-7);
        Assert.Equal(5, r.StrataUsed);
    }

    [Fact]
    public void Test_PenicillinWithoutCorrection_MatchesRecomputedValue()
    {
        // REFERENCES.md (recomputed): 5.6571, p = 0.01738. Because those are recomputed, the
        // statistic is also written out here from Mantel & Haenszel's definition.
        var r = CochranMantelHaenszel.Test(Rabbits, continuityCorrection: false);
        Close.To(5.6571, r.ChiSquare, 0, 5e-5);
        Close.To(0.01738, r.PValue, 0, 5e-6);

        double delta = 0, variance = 0;
        foreach (var t in Rabbits)
        {
            double n = t.A + t.B + t.C + t.D;
            delta += t.A - (t.A + t.B) * (t.A + t.C) / n;
            variance += (t.A + t.B) * (t.C + t.D) * (t.A + t.C) * (t.B + t.D) / (n * n * (n - 1));
        }
        Close.To(delta * delta / variance, r.ChiSquare, 1e-14);
    }

    [Fact]
    public void Test_TinyStrata_AreSkipped()
    {
        Table2x2[] strata = [.. Rabbits, new(1, 0, 0, 0), new(0, 0, 0, 0)];
        var r = CochranMantelHaenszel.Test(strata);
        Assert.Equal(5, r.StrataUsed);
        Close.To(3.9286, r.ChiSquare, 0, 5e-5);
    }
}
