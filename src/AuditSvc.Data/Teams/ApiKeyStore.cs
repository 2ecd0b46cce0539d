using Dapper;
using Npgsql;

namespace AuditSvc.Data.Teams;

public sealed record ApiKeyInfo(Guid Id, Guid TeamId, string TeamName, string Prefix, string Name, DateTime CreatedAt, DateTime? RevokedAt);

/// <summary>The caller a valid key stands for.</summary>
public sealed record Caller(Guid TeamId, string TeamName, Guid KeyId);

public sealed class ApiKeyStore(NpgsqlDataSource db)
{
    /// <summary>Creates a key for the team; the returned key text is shown once and never stored.</summary>
    public async Task<(string Key, ApiKeyInfo Info)> CreateAsync(Guid teamId, string name, CancellationToken ct)
    {
        var (key, prefix) = ApiKeySecret.New();
        await using var conn = await db.OpenConnectionAsync(ct);
        var info = await conn.QuerySingleAsync<ApiKeyInfo>(new CommandDefinition(
            """
            WITH k AS (
                INSERT INTO api_keys (id, team_id, prefix, hash, name) VALUES (@id, @teamId, @prefix, @hash, @name)
                RETURNING *)
            SELECT k.id AS Id, k.team_id AS TeamId, t.name AS TeamName, k.prefix AS Prefix, k.name AS Name,
                   k.created_at AS CreatedAt, k.revoked_at AS RevokedAt
            FROM k JOIN teams t ON t.id = k.team_id
            """, new { id = Guid.CreateVersion7(), teamId, prefix, hash = ApiKeySecret.Hash(key), name }, cancellationToken: ct));
        return (key, info);
    }

    /// <summary>The caller for a presented key, or null when it is unknown, revoked or wrong.</summary>
    public async Task<Caller?> VerifyAsync(string presented, CancellationToken ct)
    {
        var prefix = ApiKeySecret.PrefixOf(presented);
        if (prefix is null) return null;
        await using var conn = await db.OpenConnectionAsync(ct);
        var row = await conn.QuerySingleOrDefaultAsync<(Guid Id, Guid TeamId, string TeamName, byte[] Hash)>(new CommandDefinition(
            """
            SELECT k.id, k.team_id, t.name, k.hash
            FROM api_keys k JOIN teams t ON t.id = k.team_id
            WHERE k.prefix = @prefix AND k.revoked_at IS NULL
            """, new { prefix }, cancellationToken: ct));
        if (row.Hash is null || !ApiKeySecret.Matches(presented, row.Hash)) return null;
        return new Caller(row.TeamId, row.TeamName, row.Id);
    }

    /// <summary>The live (not revoked) key with this prefix, or null; one indexed lookup, cheap enough for every request.</summary>
    public async Task<ApiKeyInfo?> FindActiveAsync(string prefix, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<ApiKeyInfo>(new CommandDefinition(
            """
            SELECT k.id AS Id, k.team_id AS TeamId, t.name AS TeamName, k.prefix AS Prefix, k.name AS Name,
                   k.created_at AS CreatedAt, k.revoked_at AS RevokedAt
            FROM api_keys k JOIN teams t ON t.id = k.team_id
            WHERE k.prefix = @prefix AND k.revoked_at IS NULL
            """, new { prefix }, cancellationToken: ct));
    }

    public async Task<IReadOnlyList<ApiKeyInfo>> ListAsync(CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<ApiKeyInfo>(new CommandDefinition(
            """
            SELECT k.id AS Id, k.team_id AS TeamId, t.name AS TeamName, k.prefix AS Prefix, k.name AS Name,
                   k.created_at AS CreatedAt, k.revoked_at AS RevokedAt
            FROM api_keys k JOIN teams t ON t.id = k.team_id
            ORDER BY t.name, k.created_at
            """, cancellationToken: ct))).ToList();
    }

    /// <summary>Revokes by prefix; returns false when no live key has it.</summary>
    public async Task<bool> RevokeAsync(string prefix, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.ExecuteAsync(new CommandDefinition(
            "UPDATE api_keys SET revoked_at = now() WHERE prefix = @prefix AND revoked_at IS NULL",
            new { prefix }, cancellationToken: ct)) == 1;
    }
}
