using AuditSvc.Core.Activations;

namespace AuditSvc.Core.Tests.Activations;

public class TopNTests
{
    [Theory]
    [InlineData(1, 20, 500)]
    [InlineData(5, 7, 100)]
    [InlineData(3, 50, 30)]
    public void Sorted_RandomScoresWithTies_EqualsBruteForceSort(int units, int n, int items)
    {
        var rng = new Random(42);
        var top = new TopN(units, n);
        var all = new List<Peak>[units];
        for (int u = 0; u < units; u++) all[u] = [];
        for (int i = 0; i < items; i++)
            for (int u = 0; u < units; u++)
            {
                // Few distinct values so ties are common: the item index must break them.
                var p = new Peak(i, rng.Next(0, 10) / 2f, (short)rng.Next(8), (short)rng.Next(8));
                top.Offer(u, p);
                all[u].Add(p);
            }
        for (int u = 0; u < units; u++)
        {
            var expected = all[u].OrderByDescending(p => p.Score).ThenBy(p => p.Item).Take(n).ToArray();
            Assert.Equal(expected, top.Sorted(u));
        }
    }

    [Fact]
    public void Merge_ChunksOfItems_EqualsOneTrackerOverAll()
    {
        var rng = new Random(7);
        var whole = new TopN(4, 25);
        var parts = new[] { new TopN(4, 25), new TopN(4, 25), new TopN(4, 25) };
        for (int i = 0; i < 900; i++)
            for (int u = 0; u < 4; u++)
            {
                var p = new Peak(i, (float)Math.Round(rng.NextDouble(), 2), 0, 0);
                whole.Offer(u, p);
                parts[i % 3].Offer(u, p);
            }
        var merged = new TopN(4, 25);
        foreach (var part in parts) merged.Merge(part);
        for (int u = 0; u < 4; u++) Assert.Equal(whole.Sorted(u), merged.Sorted(u));
    }

    [Theory]
    [InlineData(100, 20)]
    [InlineData(5000, 100)]
    [InlineData(100000, 250)]
    public void DefaultN_ClampsTwoPercent(int items, int expected) => Assert.Equal(expected, TopN.DefaultN(items));
}
