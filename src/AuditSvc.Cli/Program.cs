using System.CommandLine;
using AuditSvc.Cli.Commands;

var root = new RootCommand("AuditSvc: audits an ONNX image classifier and its labelled image set for shortcut cues.");
root.Subcommands.Add(AuditCommand.Create());
root.Subcommands.Add(InspectCommand.Create());
root.Subcommands.Add(DemoCommand.Create());
root.Subcommands.Add(DemoSetCommand.Create());
root.Subcommands.Add(ScenarioSetCommand.Create());
root.Subcommands.Add(CompareCommand.Create());
root.Subcommands.Add(ServeCommand.Create());
root.Subcommands.Add(WorkerCommand.Create());
root.Subcommands.Add(MigrateCommand.Create());
root.Subcommands.Add(KeysCommand.Create());
root.Subcommands.Add(GateCommand.Create());
root.Subcommands.Add(BenchCommand.Create());
return await ExitCodes.RunAsync(root, args);
