using AuditSvc.Core.Statistics;
using MathNetBinomial = MathNet.Numerics.Distributions.Binomial;
using MathNetChiSquared = MathNet.Numerics.Distributions.ChiSquared;

namespace AuditSvc.Core.Tests.Statistics;

public class McNemarTests
{
    [Fact]
    public void Test_PresidentialApproval_MatchesAgresti()
    {
        // Agresti, Categorical Data Analysis: approval at two surveys, 794 / 150 / 86 / 570 (REFERENCES.md).
        // Only the discordant 150 and 86 enter: z² = (86 − 150)²/236 = 17.36, p < 0.001.
        var r = McNemar.Test(150, 86);
        Assert.Equal(150, r.TreatedOnly);
        Assert.Equal(86, r.ControlOnly);
        Close.To(17.36, r.ChiSquare, 0, 5e-3);
        Assert.True(r.PAsymptotic < 0.001, $"p = {r.PAsymptotic}");
        // The same tail from MathNet.Numerics' χ² distribution (reference library).
        Close.To(1 - MathNetChiSquared.CDF(1, 4096.0 / 236), r.PAsymptotic, 1e-9);
        Assert.True(r.PExact < 0.001, $"exact p = {r.PExact}");
    }

    [Fact]
    public void Test_DiscordantCounts_ExactMatchesMathNetBinomial()
    {
        // Reference: MathNet.Numerics' Binomial CDF at p = 1/2, doubled and capped at 1.
        foreach (var (b, c) in new[] { (0, 1), (1, 0), (0, 5), (2, 9), (9, 2), (12, 30), (40, 25), (150, 86), (400, 460), (3000, 2850) })
        {
            int n = b + c;
            double expected = Math.Min(1.0, 2 * MathNetBinomial.CDF(0.5, n, Math.Min(b, c)));
            Close.To(expected, McNemar.Test(b, c).PExact, 1e-9, 1e-300, $"b={b}, c={c}");
        }
    }

    [Fact]
    public void Test_SmallCounts_ExactMatchesEnumeration()
    {
        // Definition: 2·Σ_{x ≤ min(b,c)} C(n, x)/2ⁿ, counted exactly in integers.
        for (int b = 0; b <= 12; b++)
            for (int c = 0; c <= 12; c++)
            {
                if (b + c == 0) continue;
                int n = b + c;
                long ways = 0, choose = 1;
                for (int x = 0; x <= Math.Min(b, c); x++)
                {
                    ways += choose;
                    choose = choose * (n - x) / (x + 1);
                }
                double expected = Math.Min(1.0, 2.0 * ways / Math.Pow(2, n));
                Close.To(expected, McNemar.Test(b, c).PExact, 1e-13, 0, $"b={b}, c={c}");
            }
    }

    [Fact]
    public void Test_EqualDiscordantCounts_GivesPOne()
    {
        foreach (int b in new[] { 1, 2, 7, 50, 1000 })
        {
            var r = McNemar.Test(b, b);
            Assert.Equal(0.0, r.ChiSquare);
            Assert.Equal(1.0, r.PAsymptotic);
            Assert.Equal(1.0, r.PExact);
        }
    }

    [Fact]
    public void Test_NoDiscordantPairs_GivesZeroStatisticAndPOne()
    {
        var r = McNemar.Test(0, 0);
        Assert.Equal(0.0, r.ChiSquare);
        Assert.Equal(1.0, r.PAsymptotic);
        Assert.Equal(1.0, r.PExact);
    }

    [Fact]
    public void Test_NegativeCount_Throws()
    {
        Assert.Throws<ArgumentOutOfRangeException>(() => McNemar.Test(-1, 3));
        Assert.Throws<ArgumentOutOfRangeException>(() => McNemar.Test(3, -1));
    }
}
