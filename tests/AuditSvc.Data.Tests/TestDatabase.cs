using AuditSvc.Data.Migrations;
using Npgsql;

namespace AuditSvc.Data.Tests;

/// <summary>
/// A database of its own for one test class (CREATE DATABASE with a unique name), so tests are isolated by
/// their own ids and never by order. Dropped again on dispose.
/// </summary>
public sealed class TestDatabase : IAsyncDisposable
{
    public static string? AdminConnectionString => Environment.GetEnvironmentVariable("AUDITSVC_TEST_DB") is { Length: > 0 } s ? s : null;
    public static bool InCi => string.Equals(Environment.GetEnvironmentVariable("CI"), "true", StringComparison.OrdinalIgnoreCase);

    private TestDatabase(string name, string connectionString)
    {
        Name = name;
        ConnectionString = connectionString;
        DataSource = AuditDataSource.Create(connectionString, "auditsvc-tests");
    }

    public string Name { get; }
    public string ConnectionString { get; }
    public NpgsqlDataSource DataSource { get; }

    /// <summary>Creates an empty database; <paramref name="migrate"/> applies the schema too.</summary>
    public static async Task<TestDatabase> CreateAsync(bool migrate = true)
    {
        var admin = AdminConnectionString
            ?? throw new InvalidOperationException("AUDITSVC_TEST_DB is not set (CI=true): the tests need the PostgreSQL that tests/run.sh starts.");
        var name = "t_" + Guid.NewGuid().ToString("N");
        await using (var conn = new NpgsqlConnection(admin))
        {
            await conn.OpenAsync();
            await using var cmd = new NpgsqlCommand($"CREATE DATABASE {name}", conn);
            await cmd.ExecuteNonQueryAsync();
        }
        var csb = new NpgsqlConnectionStringBuilder(admin) { Database = name };
        var db = new TestDatabase(name, csb.ConnectionString);
        if (migrate) await new MigrationRunner(db.DataSource).ApplyAsync(CancellationToken.None);
        return db;
    }

    public async ValueTask DisposeAsync()
    {
        await DataSource.DisposeAsync();
        NpgsqlConnection.ClearAllPools();
        await using var conn = new NpgsqlConnection(AdminConnectionString);
        await conn.OpenAsync();
        await using var cmd = new NpgsqlCommand($"DROP DATABASE IF EXISTS {Name} WITH (FORCE)", conn);
        await cmd.ExecuteNonQueryAsync();
    }
}
