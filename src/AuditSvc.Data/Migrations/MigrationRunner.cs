using Dapper;
using Npgsql;

namespace AuditSvc.Data.Migrations;

/// <summary>
/// Applies the scripts not yet recorded in <c>schema_version</c>, all in one transaction under a
/// transaction-scoped advisory lock, so concurrent runners (API, workers, CLI starting together)
/// serialise and the second one finds nothing left to do. The CLI, the service and the tests use it.
/// </summary>
public sealed class MigrationRunner(NpgsqlDataSource dataSource, IReadOnlyList<Migration>? migrations = null)
{
    /// <summary>The advisory lock key: "AuditSvc" in ASCII, so it will not collide with other users of the database.</summary>
    public const long LockKey = 0x4175_6469_7453_7663;

    private readonly IReadOnlyList<Migration> _migrations = migrations ?? Migration.Embedded();

    /// <summary>Applies what is missing; returns the versions applied by this call (empty when up to date).</summary>
    public async Task<IReadOnlyList<int>> ApplyAsync(CancellationToken ct)
    {
        await using var conn = await dataSource.OpenConnectionAsync(ct);
        await using var tx = await conn.BeginTransactionAsync(ct);
        // The lock comes first: even CREATE TABLE IF NOT EXISTS races when two sessions run it at once.
        await conn.ExecuteAsync(new CommandDefinition("SELECT pg_advisory_xact_lock(@key)", new { key = LockKey }, tx, cancellationToken: ct));
        await conn.ExecuteAsync(new CommandDefinition(
            """
            CREATE TABLE IF NOT EXISTS schema_version (
                version     integer PRIMARY KEY,
                name        text NOT NULL,
                applied_at  timestamptz NOT NULL DEFAULT now()
            )
            """, transaction: tx, cancellationToken: ct));
        var done = (await conn.QueryAsync<int>(new CommandDefinition(
            "SELECT version FROM schema_version", transaction: tx, cancellationToken: ct))).ToHashSet();

        var applied = new List<int>();
        foreach (var m in _migrations.Where(m => !done.Contains(m.Version)))
        {
            await conn.ExecuteAsync(new CommandDefinition(m.Sql, transaction: tx, cancellationToken: ct));
            await conn.ExecuteAsync(new CommandDefinition(
                "INSERT INTO schema_version (version, name) VALUES (@Version, @Name)",
                new { m.Version, m.Name }, tx, cancellationToken: ct));
            applied.Add(m.Version);
        }
        await tx.CommitAsync(ct);
        return applied;
    }

    /// <summary>Versions recorded in the database, ascending; empty when the table does not exist yet.</summary>
    public async Task<IReadOnlyList<int>> AppliedAsync(CancellationToken ct)
    {
        await using var conn = await dataSource.OpenConnectionAsync(ct);
        var exists = await conn.ExecuteScalarAsync<bool>(new CommandDefinition(
            "SELECT to_regclass('schema_version') IS NOT NULL", cancellationToken: ct));
        if (!exists) return [];
        return (await conn.QueryAsync<int>(new CommandDefinition(
            "SELECT version FROM schema_version ORDER BY version", cancellationToken: ct))).ToList();
    }
}
