using System.CommandLine;

namespace AuditSvc.Cli.Commands;

internal static class InspectCommand
{
    public static Command Create()
    {
        var cmd = new Command("inspect", "inspect (not yet built)");
        cmd.SetAction(_ => 0);
        return cmd;
    }
}
