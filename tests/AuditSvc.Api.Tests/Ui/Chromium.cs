using System.Diagnostics;
using Xunit.Abstractions;

namespace AuditSvc.Api.Tests.Ui;

/// <summary>
/// Headless Chromium from the machine (AUDITSVC_CHROMIUM, else /usr/bin/chromium), each run with a fresh profile
/// and nothing that reaches the network on its own.
/// </summary>
internal static class Chromium
{
    public static string Path => Environment.GetEnvironmentVariable("AUDITSVC_CHROMIUM") is { Length: > 0 } p ? p : "/usr/bin/chromium";

    /// <summary>False (after saying why) when Chromium is missing outside CI; under CI=true a missing browser fails.</summary>
    public static bool Available(ITestOutputHelper output)
    {
        if (File.Exists(Path)) return true;
        if (AuditSvc.Data.Tests.TestDatabase.InCi) Assert.Fail($"Chromium not found at {Path} (CI=true): install it or set AUDITSVC_CHROMIUM.");
        output.WriteLine($"Chromium not found at {Path}: browser test not run (tests/run.sh installs it; or set AUDITSVC_CHROMIUM).");
        return false;
    }

    public static ProcessStartInfo StartInfo(string profile, IEnumerable<string> extra)
    {
        var psi = new ProcessStartInfo(Path) { UseShellExecute = false, RedirectStandardOutput = true, RedirectStandardError = true };
        foreach (var a in new[]
        {
            "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking",
            "--disable-component-update", "--disable-sync", "--hide-scrollbars", "--window-size=1280,1000", $"--user-data-dir={profile}",
        }.Concat(extra)) psi.ArgumentList.Add(a);
        return psi;
    }

    /// <summary>Runs Chromium once in command-line mode (e.g. --dump-dom URL) and returns what it printed.</summary>
    public static async Task<string> RunAsync(params string[] args)
    {
        var profile = Directory.CreateTempSubdirectory("auditsvc-chromium-").FullName;
        try
        {
            using var p = Process.Start(StartInfo(profile, args))!;
            var stdout = p.StandardOutput.ReadToEndAsync();
            var stderr = p.StandardError.ReadToEndAsync();
            using var guard = new CancellationTokenSource(TimeSpan.FromMinutes(2)); // against a hang, not a timing check
            try { await p.WaitForExitAsync(guard.Token); }
            catch (OperationCanceledException) { p.Kill(entireProcessTree: true); throw new TimeoutException("chromium did not exit: " + await stderr); }
            return await stdout;
        }
        finally { TryDelete(profile); }
    }

    public static void TryDelete(string dir)
    {
        try { Directory.Delete(dir, recursive: true); } catch (IOException) { } catch (UnauthorizedAccessException) { }
    }
}
