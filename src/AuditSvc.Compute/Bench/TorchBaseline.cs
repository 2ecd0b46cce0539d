using System.Diagnostics;
using System.Globalization;
using System.Text.Json;

namespace AuditSvc.Compute.Bench;

/// <summary>
/// Runs the eager-mode comparison script (bench/torch_hooks.py: the same network rebuilt in PyTorch, forward
/// hooks taking channel maxima and top-n) on the bench's images with the same threads and batch, and reads the
/// images per second from the JSON object on its last line.
/// </summary>
public static class TorchBaseline
{
    /// <summary>Architecture name the script knows for a model file, or null.</summary>
    public static string? ArchitectureOf(string modelPath)
    {
        var name = Path.GetFileNameWithoutExtension(modelPath).ToLowerInvariant();
        return name.Contains("resnet18", StringComparison.Ordinal) ? "resnet18"
            : name.StartsWith("fruit-", StringComparison.Ordinal) ? "fruit"
            : null;
    }

    /// <summary>Images per second the script reports, or null with the reason when it could not run.</summary>
    public static (double? ImagesPerSecond, string Note) Run(string python, string script, string arch, string imagesDir, int width, int height,
        int threads, int batch, CancellationToken ct)
    {
        var r = RunDetailed(python, script, arch, imagesDir, null, width, height, threads, batch, ct);
        return (r.ImagesPerSecond, r.Note);
    }

    /// <summary>
    /// Runs the script on every image of <paramref name="imagesDir"/>, or on the rows of <paramref name="manifest"/> when
    /// given; its images per second and the seconds of its timed loop, or nulls with the reason when it could not run.
    /// </summary>
    public static (double? ImagesPerSecond, double? Seconds, string Note) RunDetailed(string python, string script, string arch, string imagesDir,
        string? manifest, int width, int height, int threads, int batch, CancellationToken ct)
    {
        var start = new ProcessStartInfo(python)
        {
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        foreach (var a in new[] { script, "--arch", arch, "--images", imagesDir, "--size", $"{width}x{height}",
                     "--threads", threads.ToString(CultureInfo.InvariantCulture), "--batch", batch.ToString(CultureInfo.InvariantCulture) })
            start.ArgumentList.Add(a);
        if (manifest is not null)
        {
            start.ArgumentList.Add("--manifest");
            start.ArgumentList.Add(manifest);
        }
        try
        {
            using var process = Process.Start(start)!;
            var stderr = process.StandardError.ReadToEndAsync(ct);
            var stdout = process.StandardOutput.ReadToEnd();
            process.WaitForExitAsync(ct).GetAwaiter().GetResult();
            var last = stdout.Split('\n', StringSplitOptions.RemoveEmptyEntries | StringSplitOptions.TrimEntries).LastOrDefault();
            if (process.ExitCode != 0 || last is null)
                return (null, null, $"{script} exited {process.ExitCode}: {stderr.GetAwaiter().GetResult().Split('\n').LastOrDefault(l => l.Length > 0)}");
            using var doc = JsonDocument.Parse(last);
            return (doc.RootElement.GetProperty("images_per_second").GetDouble(), doc.RootElement.GetProperty("seconds").GetDouble(),
                $"{python} {Path.GetFileName(script)} --arch {arch}");
        }
        catch (Exception e) when (e is System.ComponentModel.Win32Exception or JsonException or KeyNotFoundException or InvalidOperationException)
        {
            return (null, null, $"{script} could not run: {e.Message}");
        }
    }
}
