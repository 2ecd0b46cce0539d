using System.CommandLine;
using AuditSvc.Api;
using Microsoft.Extensions.Hosting;

namespace AuditSvc.Cli.Commands;

/// <summary>`auditsvc serve`: the web API with its own job workers; settings come from AUDITSVC_* variables.</summary>
internal static class ServeCommand
{
    public static Command Create()
    {
        var urls = new Option<string>("--urls") { Description = "addresses to listen on", DefaultValueFactory = _ => "http://0.0.0.0:8080" };
        var cmd = new Command("serve", "run the REST service and job workers (AUDITSVC_DB, AUDITSVC_DATA; see README.md, Service)") { urls };
        cmd.SetAction(async (parse, ct) =>
        {
            await ServiceDb.CheckReachableAsync(ct);
            var app = ServiceHost.BuildApi(["--urls", parse.GetValue(urls)!]);
            await app.StartAsync(ct);
            await app.WaitForShutdownAsync(ct);
            return ExitCodes.Pass;
        });
        return cmd;
    }
}
