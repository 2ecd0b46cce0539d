using System.CommandLine;
using AuditSvc.Api.Hosting;
using AuditSvc.Core;
using AuditSvc.Data;
using Microsoft.Extensions.Configuration;
using Npgsql;

namespace AuditSvc.Cli.Commands;

/// <summary>The --db option shared by the commands that talk to the service's database directly.</summary>
internal static class ServiceDb
{
    public static Option<string?> Option() => new("--db")
    {
        Description = "PostgreSQL connection string (default: AUDITSVC_DB, then ConnectionStrings__Audit)",
    };

    public static NpgsqlDataSource Open(ParseResult parse, Option<string?> db) => Open(ConnectionString(parse, db));

    public static string ConnectionString(ParseResult parse, Option<string?> db)
    {
        var cs = parse.GetValue(db)
            ?? Environment.GetEnvironmentVariable("AUDITSVC_DB")
            ?? Environment.GetEnvironmentVariable("ConnectionStrings__Audit");
        if (string.IsNullOrWhiteSpace(cs)) throw new AuditInputException("--db", "no connection string: pass --db or set AUDITSVC_DB");
        return cs;
    }

    public static NpgsqlDataSource Open(string connectionString) =>
        AuditDataSource.Create(Parse(connectionString).ConnectionString, "auditsvc-cli");

    /// <summary>Parses a connection string; a malformed one is bad input, named without echoing it (it may hold a password).</summary>
    public static NpgsqlConnectionStringBuilder Parse(string connectionString)
    {
        try { return new NpgsqlConnectionStringBuilder(connectionString); }
        catch (Exception e) when (e is ArgumentException or FormatException or InvalidCastException)
        {
            throw new AuditInputException("--db / AUDITSVC_DB", $"is not a valid PostgreSQL connection string ({e.Message.Split('\n')[0]}); expected e.g. Host=localhost;Username=auditsvc;Password=…;Database=auditsvc");
        }
    }

    /// <summary>
    /// Creates the connection string's database when the server says it does not exist (SQLSTATE 3D000),
    /// connecting to the server's maintenance database with the same login. Returns whether it created it.
    /// </summary>
    public static async Task<bool> CreateDatabaseIfMissingAsync(string connectionString, CancellationToken ct)
    {
        var csb = Parse(connectionString);
        var name = string.IsNullOrEmpty(csb.Database) ? csb.Username : csb.Database;
        if (string.IsNullOrEmpty(name)) return false;
        try
        {
            await using var probe = new NpgsqlConnection(csb.ConnectionString);
            await probe.OpenAsync(ct);
            return false;
        }
        catch (PostgresException e) when (e.SqlState == "3D000")
        {
            // Fall through: the server answers, the database is missing.
        }
        var admin = new NpgsqlConnectionStringBuilder(csb.ConnectionString) { Database = "postgres", Pooling = false };
        await using var conn = new NpgsqlConnection(admin.ConnectionString);
        await conn.OpenAsync(ct);
        await using var cmd = new NpgsqlCommand($"CREATE DATABASE {QuoteIdentifier(name)}", conn);
        try { await cmd.ExecuteNonQueryAsync(ct); }
        catch (PostgresException e) when (e.SqlState == "42P04") { return false; } // created meanwhile by another runner
        return true;
    }

    /// <summary>
    /// Before a host starts: the database its settings name answers. A refusal then reads as one line
    /// (exit 2) instead of the host's start-up failure with a stack trace. No connection string: the host's
    /// own settings check says so.
    /// </summary>
    public static async Task CheckReachableAsync(CancellationToken ct)
    {
        var config = new ConfigurationBuilder().AddEnvironmentVariables().Build();
        var cs = ServiceConfiguration.Read(config).ConnectionString;
        if (string.IsNullOrWhiteSpace(cs)) return;
        var csb = Parse(cs);
        csb.Pooling = false;
        await using var conn = new NpgsqlConnection(csb.ConnectionString);
        await conn.OpenAsync(ct);
    }

    private static string QuoteIdentifier(string name) => "\"" + name.Replace("\"", "\"\"", StringComparison.Ordinal) + "\"";
}
