using System.Text.RegularExpressions;
using AuditSvc.Compute.Audits;

namespace AuditSvc.Compute.Tests.Audits;

public sealed class MemoryTraceTests
{
    [Fact]
    public void Line_OnLinux_GivesTheKernelsAndTheCollectorsFigures()
    {
        var line = MemoryTrace.Line("here", collect: false);

        Assert.StartsWith("[memory] here: resident ", line);
        // Every figure is a number of MiB: /proc/self/status was read (no "?") and the collector answered.
        foreach (var name in new[] { "resident", "high-water", "anonymous", "files", "managed", "heap", "gen0", "gen1", "gen2", "large", "pinned", "fragmented", "committed" })
            Assert.Matches(new Regex($@"\b{name} \d+\b"), line);
        Assert.True(int.Parse(Regex.Match(line, @"resident (\d+)").Groups[1].Value) > 0);
    }

    [Fact]
    public void Line_Collect_RunsAFullCollectionFirst()
    {
        int before = GC.CollectionCount(2);
        MemoryTrace.Line("after", collect: true);

        // What the line then shows is what is still reachable (other tests may allocate meanwhile, so no sizes here).
        Assert.True(GC.CollectionCount(2) > before);
    }
}
