using System.CommandLine;
using AuditSvc.Api;
using Microsoft.Extensions.Hosting;

namespace AuditSvc.Cli.Commands;

/// <summary>`auditsvc worker`: an extra job worker; joins by pointing at the same database and artifact root.</summary>
internal static class WorkerCommand
{
    public static Command Create()
    {
        var cmd = new Command("worker", "run audit jobs only (same AUDITSVC_DB and AUDITSVC_DATA as the service)");
        cmd.SetAction(async (_, ct) =>
        {
            await ServiceDb.CheckReachableAsync(ct);
            using var host = ServiceHost.BuildWorker([]);
            await host.RunAsync(ct);
            return ExitCodes.Pass;
        });
        return cmd;
    }
}
