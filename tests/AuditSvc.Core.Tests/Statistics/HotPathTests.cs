using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Tests.Statistics;

public class HotPathTests
{
    // The analysis runs these for every unit × stratum × attribute value; they must not allocate
    // once warm (a design requirement of this project, not a published value).
    [Fact]
    public void MidRanksAndCombine_Warm_AllocateNothing()
    {
        var random = new Random(9);
        var values = new float[500];
        for (int i = 0; i < values.Length; i++) values[i] = random.Next(100);
        var codes = new int[500];
        for (int i = 0; i < codes.Length; i++) codes[i] = random.Next(-1, 20);
        var ranks = new double[500];
        var order = new int[500];
        var sums = new double[20];
        var counts = new int[20];
        var strata = new StratumRankSum[4];

        void Run()
        {
            double tie = MidRanks.Compute(values, ranks, order);
            sums.AsSpan().Clear();
            counts.AsSpan().Clear();
            VanElteren.AccumulateRankSums(ranks, codes, sums, counts);
            for (int k = 0; k < strata.Length; k++) strata[k] = new StratumRankSum(500, counts[k], sums[k], tie);
            _ = VanElteren.Combine(strata);
        }

        Run();
        long before = GC.GetAllocatedBytesForCurrentThread();
        Run();
        long allocated = GC.GetAllocatedBytesForCurrentThread() - before;
        // Combine returns one small result record; nothing else may be allocated.
        Assert.True(allocated <= 128, $"allocated {allocated} bytes");
    }
}
