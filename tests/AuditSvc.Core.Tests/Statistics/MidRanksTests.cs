using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Tests.Statistics;

public class MidRanksTests
{
    [Fact]
    public void Compute_TiedValues_ShareMeanRank()
    {
        // Mid-ranks by definition (Hollander & Wolfe 1973, §4.1): 1.0 ×2 → 1.5, 3.0 ×3 → 4.
        float[] values = [3f, 1f, 3f, 7f, 1f, 3f];
        var ranks = new double[values.Length];
        double tie = MidRanks.Compute(values, ranks);
        Assert.Equal([4, 1.5, 4, 6, 1.5, 4], ranks);
        Assert.Equal((8 - 2) + (27 - 3), tie);
    }

    [Fact]
    public void Compute_RandomWithTies_MatchesPairCounting()
    {
        // Independent definition: rank = #(smaller) + (#(equal) + 1)/2.
        var random = new Random(3);
        for (int trial = 0; trial < 50; trial++)
        {
            int n = random.Next(1, 80);
            var values = new float[n];
            for (int i = 0; i < n; i++) values[i] = random.Next(0, 12) * 0.5f;
            var ranks = new double[n];
            var order = new int[n];
            double tie = MidRanks.Compute(values, ranks, order);

            double expectedTie = 0;
            var counts = values.GroupBy(v => v).Select(g => (double)g.Count());
            foreach (double t in counts) expectedTie += t * t * t - t;
            Assert.Equal(expectedTie, tie);
            for (int i = 0; i < n; i++)
            {
                int smaller = values.Count(v => v < values[i]), equal = values.Count(v => v == values[i]);
                Assert.Equal(smaller + (equal + 1) / 2.0, ranks[i]);
            }
            for (int k = 1; k < n; k++) Assert.True(values[order[k - 1]] <= values[order[k]]);
        }
    }

    [Fact]
    public void Compute_SignedValuesAndZeros_MatchesPairCounting()
    {
        // −0 and +0 are equal floats and must tie; negatives and infinities order as numbers.
        float[] values = [-0f, 0f, -1.5f, 2f, float.NegativeInfinity, -1e-30f, 1e-30f, float.PositiveInfinity, -1.5f, -7f];
        var ranks = new double[values.Length];
        MidRanks.Compute(values, ranks);
        for (int i = 0; i < values.Length; i++)
        {
            int smaller = values.Count(v => v < values[i]), equal = values.Count(v => v == values[i]);
            Assert.Equal(smaller + (equal + 1) / 2.0, ranks[i]);
        }
    }

    [Fact]
    public void Compute_NaN_Throws()
    {
        var ranks = new double[2];
        Assert.Throws<ArgumentException>(() => MidRanks.Compute([1f, float.NaN], ranks));
    }
}
