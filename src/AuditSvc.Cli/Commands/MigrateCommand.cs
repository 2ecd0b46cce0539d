using System.CommandLine;
using AuditSvc.Data.Migrations;

namespace AuditSvc.Cli.Commands;

/// <summary>`auditsvc migrate`: creates the database when it is missing, then applies the schema scripts not yet applied (the service also does so at start).</summary>
internal static class MigrateCommand
{
    public static Command Create()
    {
        var db = ServiceDb.Option();
        var cmd = new Command("migrate", "apply pending database migrations") { db };
        cmd.SetAction(async (parse, ct) =>
        {
            var cs = ServiceDb.ConnectionString(parse, db);
            if (await ServiceDb.CreateDatabaseIfMissingAsync(cs, ct))
                Console.WriteLine($"created database {ServiceDb.Parse(cs).Database}");
            await using var source = ServiceDb.Open(cs);
            var runner = new MigrationRunner(source);
            var applied = await runner.ApplyAsync(ct);
            var all = await runner.AppliedAsync(ct);
            Console.WriteLine(applied.Count == 0
                ? $"schema up to date (version {all.LastOrDefault()})"
                : $"applied {string.Join(", ", applied.Select(v => v.ToString("D4", System.Globalization.CultureInfo.InvariantCulture)))}; schema at version {all.Last()}");
            return ExitCodes.Pass;
        });
        return cmd;
    }
}
