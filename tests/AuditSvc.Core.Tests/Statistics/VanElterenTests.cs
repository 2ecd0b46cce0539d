using AuditSvc.Core.Statistics;
using MathNetNormal = MathNet.Numerics.Distributions.Normal;

namespace AuditSvc.Core.Tests.Statistics;

public class VanElterenTests
{
    [Fact]
    public void Combine_OneStratum_ReducesToWilcoxonNormalApproximation()
    {
        // Hollander & Wolfe (1973) p. 69 data; SciPy 1.10.1 gives p = 0.11034 without continuity
        // correction (REFERENCES.md). van Elteren (1960) with one stratum is that test.
        float[] pooled = [0.80f, 0.83f, 1.89f, 1.04f, 1.45f, 1.38f, 1.91f, 1.64f, 0.73f, 1.46f,
                          1.15f, 0.88f, 0.90f, 0.74f, 1.21f];
        var ranks = new double[pooled.Length];
        double tie = MidRanks.Compute(pooled, ranks);
        double w = ranks.AsSpan(0, 10).ToArray().Sum();
        var r = VanElteren.Combine([new StratumRankSum(15, 10, w, tie)]);
        Close.To(0.11034, r.PValue, 0, 5e-6);
        Close.To(0.70, r.Auroc, 1e-15);
        Assert.Equal((1, 10, 5), (r.StrataUsed, r.ItemsWithValue, r.ItemsWithout));
    }

    [Fact]
    public void Combine_TwoStrata_MatchesHandComputation()
    {
        // Worked by hand from van Elteren's definition (T = Σ W_k/(N_k+1), no ties):
        // stratum 1: N=6, M=3, ranks with value 4,5,6 → W=15, Var W = 3·3·7/12 = 5.25
        // stratum 2: N=7, M=3, ranks with value 2,5,7 → W=14, Var W = 3·4·8/12 = 8
        // stratum 3: N=5, M=2 → skipped (fewer than 3 with the value)
        // T = 15/7 + 14/8, E = 3/2 + 3/2, Var = 5.25/49 + 8/64 = 13/56
        // AUROC: U = 9 of 9 pairs and 8 of 12 pairs → 17/21.
        StratumRankSum[] strata = [new(6, 3, 15, 0), new(7, 3, 14, 0), new(5, 2, 9, 0)];
        var r = VanElteren.Combine(strata);
        double t = 15.0 / 7 + 14.0 / 8;
        double z = (t - 3) / Math.Sqrt(13.0 / 56);
        Close.To(t, r.Statistic, 1e-15);
        Close.To(z, r.Z, 1e-14);
        Close.To(1 - MathNetNormal.CDF(0, 1, z), r.PValue, 1e-12);  // reference: MathNet normal CDF
        Close.To(17.0 / 21, r.Auroc, 1e-15);
        Assert.Equal((2, 6, 7), (r.StrataUsed, r.ItemsWithValue, r.ItemsWithout));
    }

    [Fact]
    public void Combine_NoUsableStratum_ReturnsUntestable()
    {
        var r = VanElteren.Combine([new StratumRankSum(5, 2, 9, 0), new StratumRankSum(10, 8, 50, 0)]);
        Assert.Equal((0, 0.0, 1.0, 0), (r.StrataUsed, r.Z, r.PValue, r.ItemsWithValue));
        Assert.True(double.IsNaN(r.Auroc));
    }

    [Fact]
    public void Combine_AllTied_ReturnsPOne()
    {
        // N = 8 all equal: every mid-rank is 4.5, tie term 8³ − 8.
        var r = VanElteren.Combine([new StratumRankSum(8, 4, 18, 504)]);
        Assert.Equal(1.0, r.PValue);
        Assert.Equal(0.0, r.Z);
        Assert.Equal(0.5, r.Auroc);
    }

    [Fact]
    public void Combine_RandomDataWithTies_MatchesBruteForce()
    {
        // Brute force from the definitions: mid-ranks by counting, AUROC by counting pairs.
        var random = new Random(1960);
        for (int trial = 0; trial < 40; trial++)
        {
            int strataCount = random.Next(1, 6);
            var strata = new StratumRankSum[strataCount];
            double t = 0, e = 0, v = 0, wins = 0, pairs = 0;
            for (int k = 0; k < strataCount; k++)
            {
                int n = random.Next(2, 40);
                var values = new float[n];
                var codes = new int[n];
                for (int i = 0; i < n; i++)
                {
                    codes[i] = random.Next(2);                            // 1 = has the value
                    values[i] = random.Next(0, 6) + (codes[i] == 1 ? 1 : 0); // few levels: many ties
                }

                // Engine path: mid-ranks, one-pass rank sums per code.
                var ranks = new double[n];
                double tie = MidRanks.Compute(values, ranks, new int[n]);
                var sums = new double[2];
                var counts = new int[2];
                VanElteren.AccumulateRankSums(ranks, codes, sums, counts);
                strata[k] = new StratumRankSum(n, counts[1], sums[1], tie);

                // Brute force.
                int m = codes.Count(c => c == 1), l = n - m;
                if (m < 3 || l < 3) continue;
                double w = 0;
                for (int i = 0; i < n; i++)
                {
                    if (codes[i] != 1) continue;
                    w += values.Count(x => x < values[i]) + (values.Count(x => x == values[i]) + 1) / 2.0;
                }
                double tieBrute = values.GroupBy(x => x).Sum(g => Math.Pow(g.Count(), 3) - g.Count());
                t += w / (n + 1.0);
                e += m / 2.0;
                v += (m * l * (n + 1.0) / 12 - m * l * tieBrute / (12.0 * n * (n - 1))) / ((n + 1.0) * (n + 1.0));
                for (int i = 0; i < n; i++)
                    for (int j = 0; j < n; j++)
                        if (codes[i] == 1 && codes[j] == 0)
                        {
                            wins += values[i] > values[j] ? 1 : values[i] == values[j] ? 0.5 : 0;
                            pairs++;
                        }
            }

            var r = VanElteren.Combine(strata);
            if (pairs == 0)
            {
                Assert.Equal(0, r.StrataUsed);
                continue;
            }
            Close.To(t, r.Statistic, 1e-13);
            Close.To(wins / pairs, r.Auroc, 1e-13);
            double z = (t - e) / Math.Sqrt(v);
            Close.To(z, r.Z, 1e-11, 1e-13);
            Close.To(1 - MathNetNormal.CDF(0, 1, z), r.PValue, 1e-9, 1e-15);   // reference: MathNet
        }
    }

    [Fact]
    public void Combine_OneStratumWithTies_EqualsMannWhitneyZ()
    {
        var random = new Random(5);
        var x = Enumerable.Range(0, 23).Select(_ => (double)random.Next(8)).ToArray();
        var y = Enumerable.Range(0, 17).Select(_ => (double)random.Next(6)).ToArray();
        var pooled = x.Concat(y).Select(v => (float)v).ToArray();
        var ranks = new double[pooled.Length];
        double tie = MidRanks.Compute(pooled, ranks);
        var r = VanElteren.Combine([new StratumRankSum(40, 23, ranks.Take(23).Sum(), tie)]);
        var mw = MannWhitney.Test(x, y);
        Close.To(mw.Z, r.Z, 1e-12);
        Close.To(mw.PValue, r.PValue, 1e-12);
        Close.To(mw.Auroc, r.Auroc, 1e-14);
    }
}
