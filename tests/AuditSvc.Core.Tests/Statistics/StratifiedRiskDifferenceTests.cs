using AuditSvc.Core.Statistics;
using Xunit.Abstractions;
using MathNetNormal = MathNet.Numerics.Distributions.Normal;

namespace AuditSvc.Core.Tests.Statistics;

public class StratifiedRiskDifferenceTests(ITestOutputHelper output)
{
    private static readonly double Z975 = MathNetNormal.InvCDF(0, 1, 0.975);

    [Fact]
    public void Compute_TeaTable_ZSquaredIsPublishedPearsonChiSquare()
    {
        // [[3, 1], [1, 3]]: Pearson χ² T = 2.000, P = 0.15730 (Fagerland, Lydersen & Laake, Statistical
        // Analysis of Contingency Tables, 2017, ch. 4, as the R package contingencytables tests it).
        var r = StratifiedRiskDifference.Compute([new BinomialPair(3, 4, 1, 4)])!;
        Close.To(0.5, r.Estimate, 1e-15);
        Close.To(2.000, r.Z * r.Z, 0, 5e-4);
        Close.To(0.15730, r.PValue, 0, 5e-6);
        Assert.Equal(1, r.StrataUsed);
    }

    [Fact]
    public void Compute_SingleStratum_EstimateIsPlainDifferenceAndZSquaredIsPearson()
    {
        // Pearson's χ² = N(ad − bc)²/(r1 r2 c1 c2), computed directly (definition).
        var random = new Random(1900);
        int checkedTables = 0;
        for (int trial = 0; trial < 1000; trial++)
        {
            int n1 = random.Next(1, 300), n2 = random.Next(1, 300);
            int x1 = random.Next(0, n1 + 1), x2 = random.Next(0, n2 + 1);
            var r = StratifiedRiskDifference.Compute([new BinomialPair(x1, n1, x2, n2)])!;
            Close.To((double)x1 / n1 - (double)x2 / n2, r.Estimate, 1e-12, 1e-15, "estimate");

            double a = x1, b = n1 - x1, c = x2, d = n2 - x2, n = n1 + n2;
            double margins = (a + b) * (c + d) * (a + c) * (b + d);
            if (margins == 0) continue; // Pearson is undefined there
            double pearson = n * (a * d - b * c) * (a * d - b * c) / margins;
            Close.To(pearson, r.Z * r.Z, 1e-9, 1e-12, $"{x1}/{n1} vs {x2}/{n2}");
            Assert.Equal(Math.Sign(a * d - b * c), Math.Sign(r.Z));
            checkedTables++;
        }
        Assert.True(checkedTables > 900);
    }

    [Fact]
    public void Compute_WithSampleSizeFactor_MatchesMiettinenNurminenAsStatsmodelsComputesIt()
    {
        // Miettinen & Nurminen (1985) multiply the variance by n/(n − 1). The test statistic, recomputed with
        // statsmodels 0.13.5 (Debian's python3-statsmodels, test_proportions_2indep, method "score",
        // correction=True): tea table 3/4 vs 1/4 gives z = 1.3228757 (= sqrt(2 · 7/8): Pearson's χ² times
        // (n − 1)/n); Perondi 7/34 vs 1/34 gives z = 2.2416512, p = 0.0249839.
        var tea = StratifiedRiskDifference.Compute([new BinomialPair(3, 4, 1, 4)], sampleSizeFactor: true)!;
        Close.To(1.3228757, tea.Z, 0, 5e-7);
        var perondi = StratifiedRiskDifference.Compute([new BinomialPair(7, 34, 1, 34)], sampleSizeFactor: true)!;
        Close.To(2.2416512, perondi.Z, 0, 5e-7);
        Close.To(0.0249839, perondi.PValue, 0, 5e-7);
        // The interval inverts that statistic: recomputed with SciPy 1.10.1 (restricted likelihood maximised
        // numerically, roots by brentq): 0.0270416 to 0.3452912. statsmodels' confint_proportions_2indep prints
        // 0.0273246 to 0.3434287: its score statistic away from δ = 0 is not the restricted-likelihood one (at
        // δ = 0.0273246 SciPy's recomputation gives 1.9569, statsmodels' own test 1.9600), so the interval is held
        // to the SciPy recomputation.
        Close.To(0.0270416, perondi.Low, 0, 5e-7);
        Close.To(0.3452912, perondi.High, 0, 5e-7);
    }

    [Fact]
    public void Compute_PerondiSingleStratum_MatchesMeeInterval()
    {
        // Perondi et al. (2004), 7/34 vs 1/34: Mee asymptotic score interval 0.0284 to 0.3439
        // (Fagerland, Lydersen & Laake 2017, ch. 4, as tested in the R package contingencytables).
        // Recomputed with SciPy 1.10.1 (restricted likelihood maximised numerically, brentq):
        // 0.028371, 0.343940. statsmodels 0.13.5 is no help here: its correction=False score
        // interval and test still apply the n/(n − 1) factor (0.0273 to 0.3434; tea table 1.75).
        var r = StratifiedRiskDifference.Compute([new BinomialPair(7, 34, 1, 34)])!;
        Close.To(6.0 / 34, r.Estimate, 1e-15);
        Close.To(0.0284, r.Low, 0, 5e-5);
        Close.To(0.3439, r.High, 0, 5e-5);
        Close.To(0.028371, r.Low, 0, 5e-6);
        Close.To(0.343940, r.High, 0, 5e-6);
    }

    [Fact]
    public void Compute_HandBuiltStrata_EstimateIsMantelHaenszelWeightedMeanAndMatchesRecomputation()
    {
        BinomialPair[] strata =
            [new(12, 20, 5, 18), new(30, 40, 22, 41), new(3, 7, 0, 9), new(0, 5, 0, 0), new(9, 9, 4, 12), new(1, 3, 2, 2)];
        // Greenland & Robins (1985): RD_MH = Σ (x1k n2k − x2k n1k)/Nk / Σ n1k n2k/Nk, strata with an
        // empty group contributing nothing.
        double numerator = 0, denominator = 0;
        foreach (var s in strata)
        {
            if (s.N1 == 0 || s.N2 == 0) continue;
            double total = s.N1 + s.N2;
            numerator += ((double)s.X1 * s.N2 - (double)s.X2 * s.N1) / total;
            denominator += (double)s.N1 * s.N2 / total;
        }
        var r = StratifiedRiskDifference.Compute(strata)!;
        Close.To(numerator / denominator, r.Estimate, 1e-14);
        Assert.Equal(5, r.StrataUsed);
        // Recomputed with SciPy 1.10.1 (Debian python3-scipy) in a separate implementation of the
        // same definition: restricted likelihoods maximised numerically, ends by brentq:
        // estimate 0.292235, interval 0.148120 to 0.423978, T(0) = 3.875846.
        Close.To(0.292235, r.Estimate, 0, 5e-7);
        Close.To(0.148120, r.Low, 0, 5e-6);
        Close.To(0.423978, r.High, 0, 5e-6);
        Close.To(3.875846, r.Z, 0, 5e-6);
    }

    [Fact]
    public void Compute_RandomStrata_ScoreAtIntervalEndsEqualsCriticalValue()
    {
        // T is recomputed here with the restricted maximum-likelihood proportions found by bisection
        // on the likelihood's derivative (not the closed-form cubic the routine uses).
        var random = new Random(1985);
        for (int trial = 0; trial < 400; trial++)
        {
            var strata = RandomStrata(random, allowEmpty: false);
            double confidence = new[] { 0.9, 0.95, 0.99 }[random.Next(3)];
            double z = MathNetNormal.InvCDF(0, 1, 0.5 + confidence / 2);
            var r = StratifiedRiskDifference.Compute(strata, confidence)!;
            string what = Describe(strata);
            Close.To(ScoreByHand(strata, 0), r.Z, 1e-9, 1e-12, $"Z {what}");
            if (r.Low > -1) Close.To(z, ScoreByHand(strata, r.Low), 0, 1e-6, $"T(Low) {what}");
            if (r.High < 1) Close.To(-z, ScoreByHand(strata, r.High), 0, 1e-6, $"T(High) {what}");
        }
    }

    [Fact]
    public void Compute_AllSuccessesVersusNone_DoesNotCollapse()
    {
        // A group accuracy of 1 against one of 0: a Wald interval would be the single point 1.
        var r = StratifiedRiskDifference.Compute([new BinomialPair(119, 119, 0, 11)])!;
        Assert.Equal(1.0, r.Estimate);
        Assert.Equal(1.0, r.High);
        Assert.True(r.Low < 1 && r.High - r.Low > 0.05, $"[{r.Low}, {r.High}]");
        Assert.True(r.PValue < 0.05);
        Close.To(0.741167, r.Low, 0, 5e-6); // recomputed with SciPy 1.10.1, as above
        Close.To(Z975, ScoreByHand([new BinomialPair(119, 119, 0, 11)], r.Low), 0, 1e-6, "T(Low)");
    }

    [Fact]
    public void Compute_TenOfTenVersusSevenOfTen_AgreesWithNoEffect()
    {
        // Pearson χ² = 20·30²/(10·10·17·3) = 3.53, p ≈ 0.06: not significant, so 0 stays inside.
        var r = StratifiedRiskDifference.Compute([new BinomialPair(10, 10, 7, 10)])!;
        Close.To(0.3, r.Estimate, 1e-14);
        Assert.True(r.PValue > 0.05, $"p = {r.PValue}");
        Assert.True(r.Low <= 0, $"low = {r.Low}");
        Close.To(20.0 * 900 / 5100, r.Z * r.Z, 1e-12);
        Close.To(-0.019648, r.Low, 0, 5e-6);  // recomputed with SciPy 1.10.1, as above
        Close.To(0.603222, r.High, 0, 5e-6);
    }

    [Fact]
    public void Compute_RandomStratifiedTables_IntervalExcludesZeroExactlyWhenTestRejects()
    {
        var random = new Random(2024);
        int tables = 0;
        for (int trial = 0; trial < 5000; trial++)
        {
            var strata = RandomStrata(random, allowEmpty: true);
            var r = StratifiedRiskDifference.Compute(strata);
            if (r is null) continue;
            tables++;
            string what = Describe(strata);
            Assert.True(-1 <= r.Low && r.Low <= r.Estimate && r.Estimate <= r.High && r.High <= 1, $"[{r.Low}, {r.High}] {what}");
            bool excludesZero = r.Low > 0 || r.High < 0;
            bool rejects = r.PValue < 0.05;
            if (excludesZero != rejects)
                Assert.True(Math.Abs(r.PValue - 0.05) < 1e-9, $"p = {r.PValue}, [{r.Low}, {r.High}] {what}");
        }
        Assert.True(tables >= 4000, $"only {tables} usable tables");
    }

    [Fact]
    public void Compute_NullMonteCarlo_RejectsAtNominalRate()
    {
        // Size under "no effect": 10,000 runs (fixed seed), 1–4 strata each with its own common
        // proportion in [0.15, 0.85] and 20–80 items per group. The rejection rate at 0.05 must lie
        // within 3 standard errors (3·√(0.05·0.95/10,000) = 0.0065) of 0.05.
        const int runs = 10_000;
        var random = new Random(5);
        int rejections = 0;
        for (int run = 0; run < runs; run++)
        {
            int k = random.Next(1, 5);
            var strata = new BinomialPair[k];
            for (int i = 0; i < k; i++)
            {
                double p = 0.15 + 0.7 * random.NextDouble();
                int n1 = random.Next(20, 81), n2 = random.Next(20, 81);
                strata[i] = new BinomialPair(Binomial(random, n1, p), n1, Binomial(random, n2, p), n2);
            }
            if (StratifiedRiskDifference.Compute(strata)!.PValue < 0.05) rejections++;
        }
        double rate = (double)rejections / runs, se = Math.Sqrt(0.05 * 0.95 / runs);
        output.WriteLine($"null rejection rate at 0.05: {rejections}/{runs} = {rate:F4}");
        Assert.True(Math.Abs(rate - 0.05) <= 3 * se, $"rejection rate {rate:F4} over {runs} runs");
    }

    [Fact]
    public void Compute_NoUsableStratum_ReturnsNull()
    {
        Assert.Null(StratifiedRiskDifference.Compute([]));
        Assert.Null(StratifiedRiskDifference.Compute([new BinomialPair(0, 0, 3, 5), new BinomialPair(2, 4, 0, 0)]));
    }

    [Fact]
    public void Compute_EmptyGroupStrata_AreSkipped()
    {
        var alone = StratifiedRiskDifference.Compute([new BinomialPair(7, 34, 1, 34)])!;
        var padded = StratifiedRiskDifference.Compute([new BinomialPair(0, 0, 3, 5), new BinomialPair(7, 34, 1, 34), new BinomialPair(4, 4, 0, 0)])!;
        Assert.Equal(1, padded.StrataUsed);
        Assert.Equal(alone, padded);
    }

    [Fact]
    public void Compute_AllStrataAtTheSameEdge_GivesZeroStatisticAndWideInterval()
    {
        var r = StratifiedRiskDifference.Compute([new BinomialPair(0, 10, 0, 12), new BinomialPair(0, 5, 0, 7)])!;
        Assert.Equal(0.0, r.Estimate);
        Assert.Equal(0.0, r.Z);
        Assert.Equal(1.0, r.PValue);
        Assert.True(r.Low < -0.1 && r.High > 0.1, $"[{r.Low}, {r.High}]");
    }

    [Fact]
    public void Compute_InvalidCounts_Throw()
    {
        Assert.Throws<ArgumentException>(() => StratifiedRiskDifference.Compute([new BinomialPair(6, 5, 1, 5)]));
        Assert.Throws<ArgumentException>(() => StratifiedRiskDifference.Compute([new BinomialPair(1, 5, -1, 5)]));
        Assert.Throws<ArgumentOutOfRangeException>(() => StratifiedRiskDifference.Compute([new BinomialPair(1, 5, 1, 5)], 1.5));
    }

    // T(δ) from the definition, with each stratum's restricted MLE found by bisection on the
    // derivative of its log-likelihood in p2 (concave, so the derivative falls through one root).
    private static double ScoreByHand(IReadOnlyList<BinomialPair> strata, double delta)
    {
        double numerator = 0, variance = 0;
        foreach (var s in strata)
        {
            if (s.N1 == 0 || s.N2 == 0) continue;
            double w = (double)s.N1 * s.N2 / (s.N1 + s.N2);
            numerator += w * ((double)s.X1 / s.N1 - (double)s.X2 / s.N2 - delta);
            double q2 = RestrictedP2(s, delta), q1 = q2 + delta;
            variance += w * w * (q1 * (1 - q1) / s.N1 + q2 * (1 - q2) / s.N2);
        }
        // 0/0 when every stratum sits at the same edge as δ: no evidence either way, T = 0.
        return numerator == 0 ? 0 : numerator / Math.Sqrt(variance);
    }

    private static double RestrictedP2(BinomialPair s, double delta)
    {
        double lo = Math.Max(0, -delta), hi = Math.Min(1, 1 - delta);
        for (int i = 0; i < 200; i++)
        {
            double p2 = 0.5 * (lo + hi), p1 = p2 + delta, slope = 0;
            if (s.X1 > 0) slope += s.X1 / p1;
            if (s.N1 - s.X1 > 0) slope -= (s.N1 - s.X1) / (1 - p1);
            if (s.X2 > 0) slope += s.X2 / p2;
            if (s.N2 - s.X2 > 0) slope -= (s.N2 - s.X2) / (1 - p2);
            if (slope > 0) lo = p2;
            else hi = p2;
        }
        return 0.5 * (lo + hi);
    }

    // 1–4 strata; sizes from tiny to large; proportions often at 0 or 1, where intervals go wrong.
    private static BinomialPair[] RandomStrata(Random random, bool allowEmpty)
    {
        var strata = new BinomialPair[random.Next(1, 5)];
        for (int i = 0; i < strata.Length; i++)
        {
            int max = random.Next(3) switch { 0 => 8, 1 => 60, _ => 600 };
            int n1 = random.Next(allowEmpty ? 0 : 1, max), n2 = random.Next(allowEmpty ? 0 : 1, max);
            strata[i] = new BinomialPair(RandomCount(random, n1), n1, RandomCount(random, n2), n2);
        }
        return strata;
    }

    private static int RandomCount(Random random, int n) => random.Next(4) switch
    {
        0 => 0,
        1 => n,
        _ => random.Next(0, n + 1),
    };

    private static int Binomial(Random random, int n, double p)
    {
        int x = 0;
        for (int i = 0; i < n; i++) if (random.NextDouble() < p) x++;
        return x;
    }

    private static string Describe(IEnumerable<BinomialPair> strata) =>
        string.Join(" ", strata.Select(s => $"{s.X1}/{s.N1}-{s.X2}/{s.N2}"));
}
