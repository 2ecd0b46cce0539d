using System.Runtime.InteropServices;
using Microsoft.ML.OnnxRuntime;

namespace AuditSvc.Compute.Models;

/// <summary>
/// The one ONNX Runtime environment of the process, with the runtime's telemetry events switched off before any
/// session exists: an audit service must not record model producers, node names or paths on the side.
/// </summary>
public static partial class OrtEnvironment
{
    // glibc's mallopt parameter M_MMAP_THRESHOLD, and the value glibc starts with (128 KiB, mallopt(3)).
    private const int MmapThresholdParam = -3;
    private const int MmapThresholdBytes = 128 * 1024;

    private static readonly Lazy<OrtEnv> Env = new(() =>
    {
        FixNativeMmapThreshold();
        var env = OrtEnv.Instance();
        env.DisableTelemetryEvents();
        return env;
    }, LazyThreadSafetyMode.ExecutionAndPublication);

    /// <summary>Creates (once) the environment with telemetry off; call before creating a session.</summary>
    public static void EnsureQuiet() => _ = Env.Value;

    /// <summary>
    /// Fixes glibc's mmap threshold at its starting value. glibc raises the threshold each time a mapped block is freed
    /// (up to 32 MiB), after which the runtime's weight-sized buffers come from the heap and stay resident when freed:
    /// building one session of ResNet-18 then held about 65 MB more at its peak. A fixed threshold maps each large block
    /// on its own and gives it back on free. The pass's own buffers come from ONNX Runtime's arena, allocated once.
    /// The price is time: every large block then arrives as fresh pages, and an optimised ResNet-18 session takes 2.4–2.9 s
    /// to build instead of 1.0 s (the audit peaked 90–180 MB higher with the threshold at 32 MiB and was no shorter, since
    /// the build overlaps decoding; docs/performance.md). Measure both before moving it.
    /// </summary>
    private static void FixNativeMmapThreshold()
    {
        if (!OperatingSystem.IsLinux()) return;
        try
        {
            _ = Mallopt(MmapThresholdParam, MmapThresholdBytes);
        }
        catch (Exception e) when (e is DllNotFoundException or EntryPointNotFoundException)
        {
            // Not glibc (musl, say): its allocator has no such threshold to fix.
        }
    }

    [LibraryImport("libc", EntryPoint = "mallopt")]
    private static partial int Mallopt(int param, int value);
}
