using System.Diagnostics;
using System.Net;
using System.Net.Sockets;

namespace AuditSvc.Api.Tests.Faults;

/// <summary>
/// A PostgreSQL cluster of the test's own, started, stopped and restarted with tools/dev-postgres.sh (the newcomer's
/// script, so the tests exercise it too). Restarting the shared cluster of tests/run.sh would break every other test.
/// </summary>
public sealed class PrivateCluster : IAsyncDisposable
{
    private readonly string _dir;
    private readonly int _port;

    private PrivateCluster(string dir, int port) { _dir = dir; _port = port; }

    /// <summary>The service's database ("auditsvc", made by the script).</summary>
    public string ConnectionString => $"Host=127.0.0.1;Port={_port};Username=auditsvc;Database=auditsvc;Timeout=5";

    public static async Task<PrivateCluster> StartAsync()
    {
        var dir = Directory.CreateTempSubdirectory("auditsvc-pg-").FullName;
        var cluster = new PrivateCluster(dir, FreePort());
        await cluster.RunAsync("start");
        return cluster;
    }

    public Task StopAsync() => RunAsync("stop");

    public Task StartAgainAsync() => RunAsync("start");

    private async Task RunAsync(string command)
    {
        var psi = new ProcessStartInfo("bash") { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        psi.ArgumentList.Add(Path.Combine(RepoRoot(), "tools", "dev-postgres.sh"));
        foreach (var a in new[] { command, "--dir", _dir, "--port", _port.ToString(System.Globalization.CultureInfo.InvariantCulture) }) psi.ArgumentList.Add(a);
        using var p = Process.Start(psi)!;
        var output = p.StandardOutput.ReadToEndAsync();
        var error = p.StandardError.ReadToEndAsync();
        using var guard = new CancellationTokenSource(TimeSpan.FromMinutes(3)); // against a hung script, not a timing check
        await p.WaitForExitAsync(guard.Token);
        if (p.ExitCode != 0) throw new InvalidOperationException($"dev-postgres.sh {command}: exit {p.ExitCode}\n{await output}\n{await error}");
    }

    private static int FreePort()
    {
        using var l = new TcpListener(IPAddress.Loopback, 0);
        l.Start();
        return ((IPEndPoint)l.LocalEndpoint).Port;
    }

    internal static string RepoRoot()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
            if (File.Exists(Path.Combine(dir.FullName, "AuditSvc.sln"))) return dir.FullName;
        throw new InvalidOperationException("AuditSvc.sln not found above " + AppContext.BaseDirectory);
    }

    public async ValueTask DisposeAsync()
    {
        try { await StopAsync(); } catch (InvalidOperationException) { }
        try { Directory.Delete(_dir, recursive: true); } catch (IOException) { } catch (UnauthorizedAccessException) { }
    }
}
