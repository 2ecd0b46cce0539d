using System.Diagnostics;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using AuditSvc.Api.Engine;
using AuditSvc.Data.Teams;
using AuditSvc.Data.Tests;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Http.Features;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Hosting;
using Microsoft.Extensions.Logging;

namespace AuditSvc.Api.Tests.Hosting;

/// <summary>
/// The real web host on 127.0.0.1 and a free port, over a database of its own and an artifact root of its own;
/// plus, on request, extra worker hosts in this process or in child processes.
/// </summary>
public sealed class ServiceUnderTest : IAsyncDisposable
{
    private readonly List<IHost> _workers = [];
    private readonly List<Process> _processes = [];

    private ServiceUnderTest(TestDatabase db, string root, WebApplication app, Uri address)
    {
        Db = db; DataRoot = root; App = app; Address = address;
    }

    public TestDatabase Db { get; }
    public string DataRoot { get; }
    public WebApplication App { get; }
    public Uri Address { get; }
    public string Markers => Directory.CreateDirectory(Path.Combine(DataRoot, "markers")).FullName;

    /// <param name="engine">The engine; null for the counting engine.</param>
    /// <param name="realEngine">Use the service's own engine (AuditSvc.Compute) instead.</param>
    /// <param name="settings">Extra AUDITSVC_* settings for this host (limits, rates).</param>
    public static async Task<ServiceUnderTest> StartAsync(int workers = 2, IAuditEngine? engine = null, bool realEngine = false,
        IReadOnlyDictionary<string, string?>? settings = null)
    {
        var db = await TestDatabase.CreateAsync(migrate: false);
        var root = Directory.CreateTempSubdirectory("auditsvc-api-").FullName;
        var app = ServiceHost.BuildApi([], b =>
        {
            b.Configuration.AddInMemoryCollection(Settings(db, root, workers));
            if (settings is not null) b.Configuration.AddInMemoryCollection(settings);
            b.WebHost.UseUrls("http://127.0.0.1:0");
            b.Logging.SetMinimumLevel(LogLevel.Warning);
            if (realEngine) b.Services.AddSingleton<IAuditEngine, ComputeEngine>();
            else b.Services.AddSingleton(engine ?? new CountingEngine());
        });
        await app.StartAsync();
        return new ServiceUnderTest(db, root, app, AddressOf(app));
    }

    /// <summary>The address a started host listens on (it was given port 0).</summary>
    public static Uri AddressOf(WebApplication app) =>
        new(app.Services.GetRequiredService<IServer>().Features.GetRequiredFeature<IServerAddressesFeature>().Addresses.First());

    /// <summary>
    /// A second service host over this one's database and artifact root, with the counting engine and
    /// <paramref name="workers"/> audit workers, built but not started: what a restart of the service looks like.
    /// </summary>
    public WebApplication BuildAgain(int workers = 0) => ServiceHost.BuildApi([], b =>
    {
        b.Configuration.AddInMemoryCollection(Settings(Db, DataRoot, workers));
        b.WebHost.UseUrls("http://127.0.0.1:0");
        b.Logging.SetMinimumLevel(LogLevel.Warning);
        b.Services.AddSingleton<IAuditEngine>(new CountingEngine());
    });

    public static Dictionary<string, string?> Settings(TestDatabase db, string root, int workers) => new()
    {
        ["AUDITSVC_DB"] = db.ConnectionString,
        ["AUDITSVC_DATA"] = root,
        ["AUDITSVC_WORKERS"] = workers.ToString(System.Globalization.CultureInfo.InvariantCulture),
        ["AUDITSVC_LEASE_SECONDS"] = "5",
        ["AUDITSVC_RECONCILE_SECONDS"] = "1",
    };

    /// <summary>An HTTP client signed in with a new key of <paramref name="team"/>.</summary>
    public async Task<HttpClient> ClientAsync(string team)
    {
        var t = await new TeamStore(Db.DataSource).EnsureAsync(team, CancellationToken.None);
        var (key, _) = await new ApiKeyStore(Db.DataSource).CreateAsync(t.Id, "tests", CancellationToken.None);
        var client = new HttpClient { BaseAddress = Address };
        client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return client;
    }

    /// <summary>A worker host in this process with its own engine (a second "machine" sharing database and root).</summary>
    public async Task StartWorkerAsync(IAuditEngine engine, int workers = 1)
    {
        var host = ServiceHost.BuildWorker([], b =>
        {
            b.Configuration.AddInMemoryCollection(Settings(Db, DataRoot, workers));
            b.Logging.SetMinimumLevel(LogLevel.Warning);
            b.Services.AddSingleton(engine);
        });
        await host.StartAsync();
        _workers.Add(host);
    }

    /// <summary>A worker in a child process (this test assembly's own Main), with the counting engine.</summary>
    public Process StartWorkerProcess(int peers = 0)
    {
        var psi = new ProcessStartInfo("dotnet") { UseShellExecute = false, RedirectStandardOutput = true, RedirectStandardError = true };
        psi.ArgumentList.Add("exec");
        psi.ArgumentList.Add(typeof(WorkerProgram).Assembly.Location);
        psi.ArgumentList.Add("worker");
        foreach (var (k, v) in Settings(Db, DataRoot, 1)) psi.Environment[k] = v;
        psi.Environment["AUDITSVC_TEST_MARKERS"] = Markers;
        psi.Environment["AUDITSVC_TEST_PEERS"] = peers.ToString(System.Globalization.CultureInfo.InvariantCulture);
        psi.Environment["Logging__LogLevel__Default"] = "Warning";
        var p = Process.Start(psi)!;
        p.OutputDataReceived += (_, _) => { };
        p.ErrorDataReceived += (_, _) => { };
        p.BeginOutputReadLine();
        p.BeginErrorReadLine();
        _processes.Add(p);
        return p;
    }

    public static async Task<T> PollAsync<T>(Func<Task<T>> read, Func<T, bool> done, string what)
    {
        // A guard against hanging the run, not a timing assertion: the loop ends as soon as the state is reached.
        var guard = Stopwatch.StartNew();
        while (true)
        {
            var value = await read();
            if (done(value)) return value;
            if (guard.Elapsed > TimeSpan.FromMinutes(3)) throw new TimeoutException($"gave up waiting for {what}; last: {value}");
            await Task.Delay(100);
        }
    }

    public async Task<AuditSnapshot> WaitForEndAsync(HttpClient client, Guid auditId) =>
        await PollAsync(async () => (await client.GetFromJsonAsync<AuditSnapshot>($"/api/audits/{auditId}"))!,
            a => a.State is "done" or "failed" or "cancelled", $"audit {auditId} to end");

    public async ValueTask DisposeAsync()
    {
        foreach (var p in _processes)
        {
            if (!p.HasExited) p.Kill(entireProcessTree: true);
            await p.WaitForExitAsync();
            p.Dispose();
        }
        foreach (var w in _workers) { await w.StopAsync(); w.Dispose(); }
        await App.StopAsync();
        await App.DisposeAsync();
        await Db.DisposeAsync();
        try { Directory.Delete(DataRoot, recursive: true); } catch (IOException) { } catch (UnauthorizedAccessException) { }
    }
}

public sealed record ProgressSnapshot(int ItemsDone, int ItemsTotal, int ChunksDone, int ChunksTotal, double? ItemsPerSecond, double? EtaSeconds);

public sealed record AuditSnapshot(Guid Id, string State, string? Verdict, string? Error, ProgressSnapshot Progress);
