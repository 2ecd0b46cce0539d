using AuditSvc.Compute.Activations;

namespace AuditSvc.Compute.Tests.Activations;

public sealed class PassCollectorTests
{
    private static PassBatch Batch(params float[][] rows)
    {
        var b = new PassBatch(rows.Length, 1, rows[0].Length) { Count = rows.Length };
        for (int i = 0; i < rows.Length; i++)
        {
            b.Items[i] = i;
            b.Ok[i] = true;
            rows[i].CopyTo(b.Scores, i * rows[0].Length);
        }
        return b;
    }

    [Fact]
    public void Collect_NaNScore_ReportsTheImageAndLeavesItUnscored()
    {
        var c = new PassCollector(3, 2, 2, 2, new PassOptions(), i => $"img{i}.png");

        c.Collect(Batch([1f, 2f], [float.NaN, 3f], [0.5f, 0.25f]));

        Assert.Equal([true, false, true], c.Scored);
        var problem = Assert.Single(c.Problems);
        Assert.Equal("img1.png", problem.File);
        Assert.Contains("NaN", problem.Reason, StringComparison.Ordinal);
    }

    [Fact]
    public void Collect_ScoresBeyondHalfRange_AreClampedAlikeInStoreAndPeaks()
    {
        var c = new PassCollector(2, 1, 2, 2, new PassOptions(), i => $"img{i}.png");

        c.Collect(Batch([1e6f], [float.NegativeInfinity]));

        var stored = new Half[2];
        c.Store.ReadRows(0, 2, stored);
        Assert.Equal([Half.MaxValue, -Half.MaxValue], stored);
        Assert.Equal((float)Half.MaxValue, c.Top.Raw(0).ToArray().Max(p => p.Score));
        Assert.Empty(c.Problems);
    }
}
