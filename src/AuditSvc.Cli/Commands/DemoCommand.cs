using System.CommandLine;

namespace AuditSvc.Cli.Commands;

internal static class DemoCommand
{
    public static Command Create()
    {
        var cmd = new Command("demo", "demo (not yet built)");
        cmd.SetAction(_ => 0);
        return cmd;
    }
}
