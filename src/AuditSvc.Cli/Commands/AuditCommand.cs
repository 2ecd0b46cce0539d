using System.CommandLine;

namespace AuditSvc.Cli.Commands;

internal static class AuditCommand
{
    public static Command Create()
    {
        var cmd = new Command("audit", "audit (not yet built)");
        cmd.SetAction(_ => 0);
        return cmd;
    }
}
