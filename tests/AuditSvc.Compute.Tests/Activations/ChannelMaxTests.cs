using AuditSvc.Compute.Activations;

namespace AuditSvc.Compute.Tests.Activations;

public class ChannelMaxTests
{
    [Theory]
    [InlineData(1)]
    [InlineData(7)]
    [InlineData(64)]
    [InlineData(1024)]
    [InlineData(3137)]
    public void Find_RandomPlanes_EqualsReference(int length)
    {
        var rng = new Random(length);
        for (int trial = 0; trial < 50; trial++)
        {
            var plane = Enumerable.Range(0, length).Select(_ => (float)Math.Round(rng.NextDouble() * 4 - 2, 1)).ToArray();
            Assert.Equal(ChannelMax.Reference(plane), ChannelMax.Find(plane));
        }
    }

    [Fact]
    public void Find_NaNInPlane_NeverWins()
    {
        var plane = Enumerable.Repeat(0.5f, 40).ToArray();
        plane[3] = float.NaN;
        plane[17] = 2f;
        Assert.Equal((2f, 17), ChannelMax.Find(plane));
    }
}

public class ScoreStoreTests
{
    [Fact]
    public void ReadUnits_AfterSpillToDisk_EqualsInMemory()
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-scores-" + Guid.NewGuid().ToString("N"));
        int items = 1000, units = 13;
        var rng = new Random(3);
        var rows = Enumerable.Range(0, items).Select(_ => Enumerable.Range(0, units).Select(_ => (float)rng.NextDouble()).ToArray()).ToArray();
        using var memory = new ScoreStore(items, units, rowsPerBlock: 64);
        using var spilled = new ScoreStore(items, units, rowsPerBlock: 64, memoryLimitBytes: 1024, spillDir: dir);
        for (int i = 0; i < items; i++)
        {
            memory.WriteRow(i, rows[i]);
            spilled.WriteRow(i, rows[i]);
            spilled.SpillIfNeeded(i + 1);
        }
        Assert.True(spilled.Spilled);
        var a = new float[5 * items];
        var b = new float[5 * items];
        memory.ReadUnits(4, 5, a);
        spilled.ReadUnits(4, 5, b);
        Assert.Equal(a, b);
        Assert.Equal((float)(Half)rows[10][6], a[2 * items + 10]);
    }

    // A row never written (an image that failed) reads as NaN, whether its block is in memory or spilled.
    [Fact]
    public void ReadUnits_RowsSkippedAcrossSpills_StayUnscored()
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-scores-" + Guid.NewGuid().ToString("N"));
        int items = 1000, units = 7;
        var rng = new Random(5);
        using var spilled = new ScoreStore(items, units, rowsPerBlock: 64, memoryLimitBytes: 64 * 7 * 2, spillDir: dir);
        var written = new bool[items];
        for (int i = 0; i < items; i++)
        {
            if (i < 128 || i % 3 != 0)
            {
                spilled.WriteRow(i, Enumerable.Range(0, units).Select(_ => (float)rng.NextDouble()).ToArray());
                written[i] = true;
            }
            spilled.SpillIfNeeded(i + 1);
        }
        var all = new float[units * items];
        spilled.ReadUnits(0, units, all);
        var rows = new Half[items * units];
        spilled.ReadRows(0, items, rows);

        Assert.True(spilled.Spilled);
        for (int i = 0; i < items; i++)
            for (int u = 0; u < units; u++)
            {
                Assert.Equal(!written[i], float.IsNaN(all[u * items + i]));
                Assert.Equal(!written[i], Half.IsNaN(rows[i * units + u]));
            }
    }
}
