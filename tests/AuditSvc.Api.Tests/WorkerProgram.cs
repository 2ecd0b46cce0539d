using AuditSvc.Api.Engine;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Hosting;

namespace AuditSvc.Api.Tests;

/// <summary>
/// `dotnet AuditSvc.Api.Tests.dll worker` runs a real worker process with the counting engine, so tests can
/// share an audit between processes and kill one mid-chunk; `… scratch ROOT` holds a partial upload in its scratch
/// until it is killed; `… sweep ROOT` sweeps once. The test runner never calls this.
/// </summary>
public static class WorkerProgram
{
    public static async Task<int> Main(string[] args)
    {
        if (args is ["scratch", var root])
        {
            // Receives an upload that never ends, into its own scratch, until it is killed.
            var scratch = new global::AuditSvc.Api.Artifacts.ScratchSpace(root);
            var partial = scratch.NewPath();
            await using var file = new FileStream(partial, FileMode.CreateNew, FileAccess.Write);
            await file.WriteAsync(new byte[1 << 20]);
            await file.FlushAsync();
            Console.WriteLine(partial);
            await Task.Delay(Timeout.Infinite);
            return 0;
        }
        if (args is ["sweep", var sweepRoot])
        {
            // One sweep from this process (its environment may switch file locking off), the count on stdout.
            using var scratch = new global::AuditSvc.Api.Artifacts.ScratchSpace(sweepRoot);
            Console.WriteLine(scratch.Sweep());
            return 0;
        }
        if (args.Length == 0 || args[0] != "worker") return 2;
        var markers = Environment.GetEnvironmentVariable("AUDITSVC_TEST_MARKERS");
        var peers = int.TryParse(Environment.GetEnvironmentVariable("AUDITSVC_TEST_PEERS"), out var p) ? p : 0;
        using var host = ServiceHost.BuildWorker(args[1..], b => b.Services.AddSingleton<IAuditEngine>(new CountingEngine(markers, peers)));
        await host.RunAsync();
        return 0;
    }
}
