using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Tests.Statistics;

public class MannWhitneyTests
{
    // Hollander & Wolfe (1973), p. 69; the example of R's wilcox.test (REFERENCES.md).
    private static readonly double[] X = [0.80, 0.83, 1.89, 1.04, 1.45, 1.38, 1.91, 1.64, 0.73, 1.46];
    private static readonly double[] Y = [1.15, 0.88, 0.90, 0.74, 1.21];

    [Fact]
    public void Test_HollanderWolfeExample_MatchesPublishedValues()
    {
        var r = MannWhitney.Test(X, Y);
        Assert.Equal(35, r.U);                                   // Hollander & Wolfe; R: W = 35
        Close.To(0.70, r.Auroc, 1e-15);                          // 35/50
        Assert.NotNull(r.PValueExact);
        Close.To(0.1272, r.PValueExact!.Value, 0, 5e-5);         // R wilcox.test exact p = 0.1272
        Close.To(0.12231, r.PValueContinuity, 0, 5e-6);          // SciPy 1.10.1 mannwhitneyu, continuity
        Close.To(0.11034, r.PValue, 0, 5e-6);                    // SciPy 1.10.1, no continuity correction
    }

    [Fact]
    public void ExactUpperTail_SmallSamples_MatchesEnumeration()
    {
        // Brute force: every way of placing m of the ranks 1..m+n in x.
        foreach (var (m, n) in new[] { (1, 1), (2, 3), (4, 5), (3, 7), (6, 6) })
        {
            var counts = new Dictionary<int, long>();
            long all = 0;
            for (int mask = 0; mask < 1 << (m + n); mask++)
            {
                if (System.Numerics.BitOperations.PopCount((uint)mask) != m) continue;
                int rankSum = 0;
                for (int b = 0; b < m + n; b++) if ((mask >> b & 1) != 0) rankSum += b + 1;
                int u = rankSum - m * (m + 1) / 2;
                counts[u] = counts.GetValueOrDefault(u) + 1;
                all++;
            }
            for (int u = 0; u <= m * n + 1; u++)
            {
                double expected = counts.Where(kv => kv.Key >= u).Sum(kv => kv.Value) / (double)all;
                Close.To(expected, MannWhitney.ExactUpperTail(m, n, u), 1e-14, 0, $"m={m}, n={n}, u={u}");
            }
        }
    }

    [Fact]
    public void Test_Ties_HasNoExactPValue()
    {
        var r = MannWhitney.Test([1, 2, 2, 3], [2, 0, 1]);
        Assert.Null(r.PValueExact);
        // Pairs counted directly: x>y counts 1, ties 1/2 (definition of U).
        Assert.Equal(9.5, r.U);
    }
}
