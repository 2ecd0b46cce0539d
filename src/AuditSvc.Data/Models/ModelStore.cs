using Dapper;
using Npgsql;

namespace AuditSvc.Data.Models;

/// <summary>A stored model. Recipe and layer catalogue are JSON as the engine wrote them.</summary>
public sealed record ModelRow(Guid Id, Guid TeamId, string Name, string ContentHash, string RelativePath,
    string Recipe, string Layers, DateTime CreatedAt);

public sealed class ModelStore(NpgsqlDataSource db)
{
    private const string Columns = """
        id AS Id, team_id AS TeamId, name AS Name, content_hash AS ContentHash, relative_path AS RelativePath,
        recipe::text AS Recipe, layers::text AS Layers, created_at AS CreatedAt
        """;

    public async Task<ModelRow> AddAsync(Guid teamId, string name, string contentHash, string relativePath,
        string recipeJson, string layersJson, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleAsync<ModelRow>(new CommandDefinition(
            $"""
            INSERT INTO models (id, team_id, name, content_hash, relative_path, recipe, layers)
            VALUES (@id, @teamId, @name, @contentHash, @relativePath, @recipeJson::jsonb, @layersJson::jsonb)
            RETURNING {Columns}
            """, new { id = Guid.CreateVersion7(), teamId, name, contentHash, relativePath, recipeJson, layersJson },
            cancellationToken: ct));
    }

    public async Task<ModelRow?> GetAsync(Guid teamId, Guid id, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<ModelRow>(new CommandDefinition(
            $"SELECT {Columns} FROM models WHERE id = @id AND team_id = @teamId",
            new { id, teamId }, cancellationToken: ct));
    }

    /// <summary>The team's rows, newest first, one page at a time (<paramref name="limit"/> is clamped to 1..500).</summary>
    public async Task<IReadOnlyList<ModelRow>> ListAsync(Guid teamId, int limit, int offset, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<ModelRow>(new CommandDefinition(
            $"SELECT {Columns} FROM models WHERE team_id = @teamId ORDER BY created_at DESC, id LIMIT @limit OFFSET @offset",
            new { teamId, limit = Math.Clamp(limit, 1, MaxPage), offset = Math.Max(0, offset) }, cancellationToken: ct))).ToList();
    }

    /// <summary>Largest page a list returns.</summary>
    public const int MaxPage = 500;

    /// <summary>Every name of the team's rows by id (names only: what pages need to show names instead of ids).</summary>
    public async Task<IReadOnlyDictionary<Guid, string>> NamesAsync(Guid teamId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<(Guid Id, string Name)>(new CommandDefinition(
            "SELECT id, name FROM models WHERE team_id = @teamId", new { teamId }, cancellationToken: ct))).ToDictionary(r => r.Id, r => r.Name);
    }
}
