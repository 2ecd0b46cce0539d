using System.CommandLine;
using AuditSvc.Cli.Commands;

var root = new RootCommand("AuditSvc: audits an ONNX image classifier and its labelled image set for shortcut cues.");
root.Subcommands.Add(AuditCommand.Create());
root.Subcommands.Add(InspectCommand.Create());
root.Subcommands.Add(DemoCommand.Create());
root.Subcommands.Add(DemoSetCommand.Create());
root.Subcommands.Add(BenchCommand.Create());
return await ExitCodes.RunAsync(root, args);
