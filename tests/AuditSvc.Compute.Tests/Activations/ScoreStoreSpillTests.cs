using AuditSvc.Compute.Activations;

namespace AuditSvc.Compute.Tests.Activations;

public sealed class ScoreStoreSpillTests
{
    [Theory]
    [InlineData(1000, 37, 64)]
    [InlineData(97, 5, 10)]
    [InlineData(10, 3, 4096)]
    public void ReadUnitsAndRows_Spilled_EqualInMemory(int items, int units, int rowsPerBlock)
    {
        var spill = Directory.CreateTempSubdirectory("auditsvc-scores-").FullName;
        try
        {
            using var memory = new ScoreStore(items, units, rowsPerBlock);
            using var disk = new ScoreStore(items, units, rowsPerBlock, memoryLimitBytes: 0, spillDir: spill);
            var random = new Random(items);
            var row = new float[units];
            for (int i = 0; i < items; i++)
            {
                if (i % 13 == 5) continue; // some rows never written (failed images): NaN in both
                for (int u = 0; u < units; u++) row[u] = (float)(random.NextDouble() * 200 - 100);
                memory.WriteRow(i, row);
                disk.WriteRow(i, row);
                disk.SpillIfNeeded(i + 1);
            }
            disk.SpillIfNeeded(items);
            Assert.True(disk.Spilled);

            foreach (var (first, count) in new[] { (0, units), (units / 2, units - units / 2), (units - 1, 1) })
            {
                var a = new float[count * items];
                var b = new float[count * items];
                memory.ReadUnits(first, count, a);
                disk.ReadUnits(first, count, b);
                Assert.Equal(a, b);
            }
            var ra = new Half[7 * units];
            var rb = new Half[7 * units];
            memory.ReadRows(items / 3, Math.Min(7, items - items / 3), ra);
            disk.ReadRows(items / 3, Math.Min(7, items - items / 3), rb);
            Assert.Equal(ra, rb);
        }
        finally
        {
            Directory.Delete(spill, recursive: true);
        }
    }
}
