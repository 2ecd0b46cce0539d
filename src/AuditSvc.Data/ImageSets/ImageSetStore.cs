using Dapper;
using Npgsql;
using NpgsqlTypes;
using AuditSvc.Core.ImageSets;

namespace AuditSvc.Data.ImageSets;

/// <summary>A stored image set: labels, attribute columns and intake report as JSON, items in their own table.</summary>
public sealed record ImageSetRow(Guid Id, Guid TeamId, string Name, string ContentHash, string RelativePath,
    string Labels, string Attributes, string Report, int ItemCount, DateTime CreatedAt);

public sealed class ImageSetStore(NpgsqlDataSource db)
{
    private const string Columns = """
        id AS Id, team_id AS TeamId, name AS Name, content_hash AS ContentHash, relative_path AS RelativePath,
        labels::text AS Labels, attributes::text AS Attributes, report::text AS Report, item_count AS ItemCount,
        created_at AS CreatedAt
        """;

    /// <summary>
    /// Adds the set and its items in one transaction; items go in by binary COPY (sets can be large). Each item's
    /// full <see cref="ImageItem.Path"/> is kept relative to <paramref name="folder"/>, the set's folder on disk.
    /// </summary>
    public async Task<ImageSetRow> AddAsync(Guid teamId, string name, string contentHash, string relativePath,
        string labelsJson, string attributesJson, string reportJson, IReadOnlyList<ImageItem> items, string folder,
        CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await using var tx = await conn.BeginTransactionAsync(ct);
        var row = await conn.QuerySingleAsync<ImageSetRow>(new CommandDefinition(
            $"""
            INSERT INTO image_sets (id, team_id, name, content_hash, relative_path, labels, attributes, report, item_count)
            VALUES (@id, @teamId, @name, @contentHash, @relativePath, @labelsJson::jsonb, @attributesJson::jsonb,
                    @reportJson::jsonb, @count)
            RETURNING {Columns}
            """, new { id = Guid.CreateVersion7(), teamId, name, contentHash, relativePath, labelsJson, attributesJson,
                       reportJson, count = items.Count }, tx, cancellationToken: ct));
        await using (var copy = await conn.BeginBinaryImportAsync(
            "COPY items (image_set_id, idx, source_row, relative_path, file_path, label, attributes, sha256) FROM STDIN (FORMAT BINARY)", ct))
        {
            foreach (var item in items)
            {
                await copy.StartRowAsync(ct);
                await copy.WriteAsync(row.Id, NpgsqlDbType.Uuid, ct);
                await copy.WriteAsync(item.Index, NpgsqlDbType.Integer, ct);
                await copy.WriteAsync(item.Row, NpgsqlDbType.Integer, ct);
                await copy.WriteAsync(item.RelativePath, NpgsqlDbType.Text, ct);
                await copy.WriteAsync(Path.GetRelativePath(folder, item.Path), NpgsqlDbType.Text, ct);
                await copy.WriteAsync(item.Label, NpgsqlDbType.Integer, ct);
                await copy.WriteAsync(item.AttributeValues, NpgsqlDbType.Array | NpgsqlDbType.Integer, ct);
                await copy.WriteAsync(item.Sha256, NpgsqlDbType.Text, ct);
            }
            await copy.CompleteAsync(ct);
        }
        await tx.CommitAsync(ct);
        return row;
    }

    public async Task<ImageSetRow?> GetAsync(Guid teamId, Guid id, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<ImageSetRow>(new CommandDefinition(
            $"SELECT {Columns} FROM image_sets WHERE id = @id AND team_id = @teamId",
            new { id, teamId }, cancellationToken: ct));
    }

    /// <summary>The team's rows, newest first, one page at a time (<paramref name="limit"/> is clamped to 1..500).</summary>
    public async Task<IReadOnlyList<ImageSetRow>> ListAsync(Guid teamId, int limit, int offset, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<ImageSetRow>(new CommandDefinition(
            $"SELECT {Columns} FROM image_sets WHERE team_id = @teamId ORDER BY created_at DESC, id LIMIT @limit OFFSET @offset",
            new { teamId, limit = Math.Clamp(limit, 1, MaxPage), offset = Math.Max(0, offset) }, cancellationToken: ct))).ToList();
    }

    /// <summary>Largest page a list returns.</summary>
    public const int MaxPage = 500;

    /// <summary>Every name of the team's rows by id (names only: what pages need to show names instead of ids).</summary>
    public async Task<IReadOnlyDictionary<Guid, string>> NamesAsync(Guid teamId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<(Guid Id, string Name)>(new CommandDefinition(
            "SELECT id, name FROM image_sets WHERE team_id = @teamId", new { teamId }, cancellationToken: ct))).ToDictionary(r => r.Id, r => r.Name);
    }

    /// <summary>
    /// Whether <paramref name="relativePath"/> (relative to the artifact root, '/'-separated) is the folder of one
    /// of the team's image sets or lies inside one.
    /// </summary>
    public async Task<bool> OwnsFolderAsync(Guid teamId, string relativePath, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.ExecuteScalarAsync<bool>(new CommandDefinition(
            """
            SELECT EXISTS (SELECT 1 FROM image_sets
                           WHERE team_id = @teamId AND (relative_path = @relativePath OR starts_with(@relativePath, relative_path || '/')))
            """, new { teamId, relativePath }, cancellationToken: ct));
    }

    /// <summary>Items in index order, each file located under <paramref name="folder"/> (the set's folder on disk now).</summary>
    public async Task<IReadOnlyList<ImageItem>> ItemsAsync(Guid imageSetId, string folder, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        var rows = await conn.QueryAsync<(int Idx, int SourceRow, string RelativePath, string FilePath, int Label, int[] Attributes, string Sha256)>(
            new CommandDefinition(
                """
                SELECT idx, source_row, relative_path, file_path, label, attributes, sha256
                FROM items WHERE image_set_id = @imageSetId ORDER BY idx
                """, new { imageSetId }, cancellationToken: ct));
        return rows.Select(r => new ImageItem(r.Idx, r.SourceRow, Path.Combine(folder, r.FilePath), r.RelativePath,
            r.Label, r.Attributes, r.Sha256)).ToList();
    }
}
