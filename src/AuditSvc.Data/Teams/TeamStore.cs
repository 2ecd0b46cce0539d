using Dapper;
using Npgsql;

namespace AuditSvc.Data.Teams;

public sealed record Team(Guid Id, string Name, DateTime CreatedAt);

public sealed class TeamStore(NpgsqlDataSource db)
{
    /// <summary>Returns the team of that name, creating it when new.</summary>
    public async Task<Team> EnsureAsync(string name, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleAsync<Team>(new CommandDefinition(
            """
            INSERT INTO teams (id, name) VALUES (@id, @name)
            ON CONFLICT (name) DO UPDATE SET name = EXCLUDED.name
            RETURNING id AS Id, name AS Name, created_at AS CreatedAt
            """, new { id = Guid.CreateVersion7(), name }, cancellationToken: ct));
    }

    public async Task<Team?> FindAsync(string name, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<Team>(new CommandDefinition(
            "SELECT id AS Id, name AS Name, created_at AS CreatedAt FROM teams WHERE name = @name",
            new { name }, cancellationToken: ct));
    }
}
