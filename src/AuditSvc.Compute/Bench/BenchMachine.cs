using System.Globalization;
using System.Runtime.InteropServices;

namespace AuditSvc.Compute.Bench;

/// <summary>What both benches print about the machine they ran on: its CPU, cores and runtime, and its load.</summary>
internal static class BenchMachine
{
    /// <summary>CPU model, cores, and (when asked) the operating system, then the .NET runtime.</summary>
    public static string Describe(bool withOs)
    {
        string cpu = "unknown CPU";
        try
        {
            cpu = File.ReadLines("/proc/cpuinfo").FirstOrDefault(l => l.StartsWith("model name", StringComparison.Ordinal))?.Split(':', 2)[1].Trim() ?? cpu;
        }
        catch (IOException)
        {
        }
        var os = withOs ? $"{RuntimeInformation.OSDescription}, " : "";
        return $"{cpu}, {Environment.ProcessorCount} cores, {os}{RuntimeInformation.FrameworkDescription}";
    }

    /// <summary>The one-minute load average, NaN where the system does not give it.</summary>
    public static double LoadAverage()
    {
        try
        {
            return double.Parse(File.ReadAllText("/proc/loadavg").Split(' ')[0], CultureInfo.InvariantCulture);
        }
        catch (Exception e) when (e is IOException or FormatException or UnauthorizedAccessException)
        {
            return double.NaN;
        }
    }
}
