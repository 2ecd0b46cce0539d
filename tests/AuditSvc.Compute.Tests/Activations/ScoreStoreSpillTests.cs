using AuditSvc.Compute.Activations;

namespace AuditSvc.Compute.Tests.Activations;

public sealed class ScoreStoreSpillTests
{
    [Theory]
    [InlineData(1000, 37, 64, 1 << 20)]
    [InlineData(97, 5, 10, 1 << 20)]
    [InlineData(10, 3, 4096, 1 << 20)]
    // The transposition buffer holds 3 units' columns of a block (37 = 12 slices of 3 and one of 1), or less than one.
    [InlineData(1000, 37, 64, 3 * 64 * 2)]
    [InlineData(97, 5, 10, 1)]
    public void ReadUnitsAndRows_Spilled_EqualInMemory(int items, int units, int rowsPerBlock, int transposeBytes)
    {
        var spill = Directory.CreateTempSubdirectory("auditsvc-scores-").FullName;
        try
        {
            using var memory = new ScoreStore(items, units, rowsPerBlock);
            using var disk = new ScoreStore(items, units, rowsPerBlock, memoryLimitBytes: 0, spillDir: spill, transposeBytes: transposeBytes);
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

    [Fact]
    public void WriteRow_AfterFirstSpill_ReusesSpilledBlocksArrays()
    {
        // 256 rows × 1,000 units: 500 KiB a block; the limit holds two. Once blocks spill, later blocks take the
        // spilled blocks' arrays: writing ten more blocks allocates far less than one block (file handles, names).
        const int units = 1000, rows = 256, blocks = 16;
        long block = rows * units * 2L;
        var spill = Directory.CreateTempSubdirectory("auditsvc-scores-").FullName;
        try
        {
            using var store = new ScoreStore(rows * blocks, units, rows, memoryLimitBytes: 2 * block, spillDir: spill);
            var row = new float[units];
            long before = 0;
            for (int i = 0; i < rows * blocks; i++)
            {
                if (i == 6 * rows) before = GC.GetAllocatedBytesForCurrentThread();
                row[0] = i;
                store.WriteRow(i, row);
                store.SpillIfNeeded(i + 1);
            }
            long allocated = GC.GetAllocatedBytesForCurrentThread() - before;
            Assert.True(store.Spilled);
            Assert.True(allocated < block / 2, $"{allocated} bytes allocated over ten blocks after the first spill (a block is {block})");
            var first = new float[rows * blocks];
            store.ReadUnits(0, 1, first);
            Assert.Equal(Enumerable.Range(0, rows * blocks).Select(i => (float)(Half)i), first);
        }
        finally
        {
            Directory.Delete(spill, recursive: true);
        }
    }

    [Fact]
    public void MostHeldBytes_Spilling_IsLimitPlusTwoBlocksAndTheBuffer()
    {
        var store = new ScoreStore(200_000, 5000, 4096, memoryLimitBytes: 512L << 20, spillDir: "unused", transposeBytes: 1 << 20);
        long block = 4096L * 5000 * 2;
        Assert.Equal((512L << 20) / block * block + 2 * block + (1 << 20), store.MostHeldBytes);
        // Without a spill folder (the service's chunks) the whole matrix is held.
        Assert.Equal(200_000L * 5000 * 2, new ScoreStore(200_000, 5000).MostHeldBytes);
    }

    [Fact]
    public void ReadUnits_AfterDispose_ThrowsInsteadOfAnsweringNaN()
    {
        var store = new ScoreStore(10, 3);
        store.WriteRow(0, [1f, 2f, 3f]);
        store.Dispose();

        Assert.Throws<ObjectDisposedException>(() => store.ReadUnits(0, 1, new float[10]));
        Assert.Throws<ObjectDisposedException>(() => store.ReadRows(0, 1, new Half[3]));
        store.Dispose(); // twice is harmless (the pipeline lets go of the scores before its callers do)
    }
}
