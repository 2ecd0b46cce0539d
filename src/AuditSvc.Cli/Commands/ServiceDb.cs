using System.CommandLine;
using AuditSvc.Core;
using AuditSvc.Data;
using Npgsql;

namespace AuditSvc.Cli.Commands;

/// <summary>The --db option shared by the commands that talk to the service's database directly.</summary>
internal static class ServiceDb
{
    public static Option<string?> Option() => new("--db")
    {
        Description = "PostgreSQL connection string (default: AUDITSVC_DB, then ConnectionStrings__Audit)",
    };

    public static NpgsqlDataSource Open(ParseResult parse, Option<string?> db)
    {
        var cs = parse.GetValue(db)
            ?? Environment.GetEnvironmentVariable("AUDITSVC_DB")
            ?? Environment.GetEnvironmentVariable("ConnectionStrings__Audit");
        if (string.IsNullOrWhiteSpace(cs)) throw new AuditInputException("--db", "no connection string: pass --db or set AUDITSVC_DB");
        return AuditDataSource.Create(cs, "auditsvc-cli");
    }
}
