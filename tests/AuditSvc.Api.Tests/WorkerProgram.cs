using AuditSvc.Api.Engine;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Hosting;

namespace AuditSvc.Api.Tests;

/// <summary>
/// `dotnet AuditSvc.Api.Tests.dll worker` runs a real worker process with the counting engine, so tests can
/// share an audit between processes and kill one mid-chunk. The test runner never calls this.
/// </summary>
public static class WorkerProgram
{
    public static async Task<int> Main(string[] args)
    {
        if (args.Length == 0 || args[0] != "worker") return 2;
        var markers = Environment.GetEnvironmentVariable("AUDITSVC_TEST_MARKERS");
        var peers = int.TryParse(Environment.GetEnvironmentVariable("AUDITSVC_TEST_PEERS"), out var p) ? p : 0;
        using var host = ServiceHost.BuildWorker(args[1..], b => b.Services.AddSingleton<IAuditEngine>(new CountingEngine(markers, peers)));
        await host.RunAsync();
        return 0;
    }
}
