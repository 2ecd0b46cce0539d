using System.Globalization;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// Where an audit's memory sits, printed on stderr at the pipeline's phase boundaries when the environment variable
/// AUDITSVC_MEMORY_TRACE is set: the kernel's view of the process (resident, its high-water mark, anonymous against
/// file-backed pages) and the garbage collector's (heap per generation, large-object heap, fragmentation, committed).
/// With AUDITSVC_MEMORY_TRACE=collect each mark first forces a full compacting collection, so the heap figures are
/// what is still reachable (slower; for tracing only). Off by default: one flag read, nothing printed.
/// </summary>
public static class MemoryTrace
{
    private static readonly string? Mode = Environment.GetEnvironmentVariable("AUDITSVC_MEMORY_TRACE");

    public static bool Enabled => !string.IsNullOrEmpty(Mode) && Mode != "0";

    /// <summary>Prints one line for <paramref name="where"/> when tracing is on.</summary>
    public static void Mark(string where)
    {
        if (!Enabled) return;
        Console.Error.WriteLine(Line(where, Mode == "collect"));
    }

    /// <summary>The trace line (public for its test): kernel figures, then the collector's, in MiB.</summary>
    public static string Line(string where, bool collect)
    {
        if (collect)
        {
            System.Runtime.GCSettings.LargeObjectHeapCompactionMode = System.Runtime.GCLargeObjectHeapCompactionMode.CompactOnce;
            GC.Collect(2, GCCollectionMode.Forced, blocking: true, compacting: true);
            GC.WaitForPendingFinalizers();
        }
        var status = ProcStatus();
        // Read only when a line is made: tracing off costs one flag read, nothing more.
        using var self = System.Diagnostics.Process.GetCurrentProcess();
        var gc = GC.GetGCMemoryInfo(GCKind.Any);
        var sizes = new long[5];
        var gen = gc.GenerationInfo;
        for (int i = 0; i < sizes.Length && i < gen.Length; i++) sizes[i] = gen[i].SizeAfterBytes;
        string G(int i) => Mib(sizes[i]);
        return string.Create(CultureInfo.InvariantCulture,
            $"[memory] {where}: resident {Kib(status, "VmRSS")} (high-water {Kib(status, "VmHWM")}; anonymous {Kib(status, "RssAnon")}, files {Kib(status, "RssFile")}) MiB; " +
            $"managed {Mib(GC.GetTotalMemory(false))} (after last collection: heap {Mib(gc.HeapSizeBytes)}, gen0 {G(0)}, gen1 {G(1)}, gen2 {G(2)}, large {G(3)}, pinned {G(4)}, " +
            $"fragmented {Mib(gc.FragmentedBytes)}, committed {Mib(gc.TotalCommittedBytes)}) MiB; allocated so far {Mib(GC.GetTotalAllocatedBytes())} MiB; " +
            $"at {(DateTime.Now - self.StartTime).TotalSeconds:0.00} s, CPU {self.TotalProcessorTime.TotalSeconds:0.00} s");
    }

    private static string Mib(long bytes) => (bytes / (1024.0 * 1024)).ToString("0", CultureInfo.InvariantCulture);

    private static string Kib(Dictionary<string, long> status, string key) =>
        status.TryGetValue(key, out var kib) ? (kib / 1024.0).ToString("0", CultureInfo.InvariantCulture) : "?";

    /// <summary>The "Name: N kB" lines of /proc/self/status (empty where there is none).</summary>
    private static Dictionary<string, long> ProcStatus()
    {
        var values = new Dictionary<string, long>(StringComparer.Ordinal);
        try
        {
            foreach (var line in File.ReadLines("/proc/self/status"))
            {
                int colon = line.IndexOf(':', StringComparison.Ordinal);
                if (colon < 0 || !line.EndsWith(" kB", StringComparison.Ordinal)) continue;
                if (long.TryParse(line.AsSpan(colon + 1, line.Length - colon - 4).Trim(), NumberStyles.None, CultureInfo.InvariantCulture, out var kib))
                    values[line[..colon]] = kib;
            }
        }
        catch (IOException) { }
        catch (UnauthorizedAccessException) { }
        return values;
    }
}
