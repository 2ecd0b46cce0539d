using System.Diagnostics;
using System.Globalization;

namespace AuditSvc.Compute.Bench;

/// <summary>
/// Peak resident memory of this process. On Linux the peak (VmHWM) can be reset by writing 5 to
/// /proc/self/clear_refs (kernel 4.0 and later), so phases of one run can each have their own peak.
/// </summary>
public static class PeakMemory
{
    /// <summary>Resets the peak to the current resident size; false where the system does not allow it.</summary>
    public static bool Reset()
    {
        try
        {
            File.WriteAllText("/proc/self/clear_refs", "5");
            return true;
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            return false;
        }
    }

    /// <summary>Peak resident bytes since start or the last <see cref="Reset"/>.</summary>
    public static long PeakBytes() => ReadStatus("VmHWM:") ?? Process.GetCurrentProcess().PeakWorkingSet64;

    /// <summary>Gives freed memory back to the system (<see cref="Models.OrtRunner.ReleaseTransient"/>).</summary>
    public static void Trim() => Models.OrtRunner.ReleaseTransient();

    /// <summary>Current resident bytes.</summary>
    public static long CurrentBytes() => ReadStatus("VmRSS:") ?? Process.GetCurrentProcess().WorkingSet64;

    private static long? ReadStatus(string field)
    {
        try
        {
            foreach (var line in File.ReadLines("/proc/self/status"))
                if (line.StartsWith(field, StringComparison.Ordinal))
                    return long.Parse(line[field.Length..].Trim().Split(' ')[0], CultureInfo.InvariantCulture) * 1024;
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException or FormatException)
        {
        }
        return null;
    }
}
