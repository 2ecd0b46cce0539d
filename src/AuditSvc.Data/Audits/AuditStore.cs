using Dapper;
using Npgsql;

namespace AuditSvc.Data.Audits;

public sealed record AuditRow(Guid Id, Guid TeamId, Guid ModelId, Guid ImageSetId, string State,
    int ItemsTotal, int ItemsDone, int ChunkSize, int ChunksTotal, int ChunksDone, string Policy,
    string? Verdict, string? Error, DateTime CreatedAt, DateTime? StartedAt, DateTime? FinishedAt);

/// <param name="Search">Text found in the model's or the image set's name, or the start of the audit's id (case-insensitive).</param>
public sealed record AuditFilter(Guid? ModelId = null, Guid? ImageSetId = null, string? Verdict = null,
    string? State = null, int Limit = 100, string? Search = null)
{
    /// <summary>Rows to skip (paging).</summary>
    public int Offset { get; init; }
}

/// <summary>Audit rows as a team sees them: every read and write is scoped by team id.</summary>
public sealed class AuditStore(NpgsqlDataSource db)
{
    internal const string Columns = """
        id AS Id, team_id AS TeamId, model_id AS ModelId, image_set_id AS ImageSetId, state AS State,
        items_total AS ItemsTotal, items_done AS ItemsDone, chunk_size AS ChunkSize, chunks_total AS ChunksTotal,
        chunks_done AS ChunksDone, policy::text AS Policy, verdict AS Verdict, error AS Error,
        created_at AS CreatedAt, started_at AS StartedAt, finished_at AS FinishedAt
        """;

    /// <summary>
    /// Creates the audit in state queued with one pending chunk row per <paramref name="chunkSize"/> items;
    /// null when the model or the image set is not the team's.
    /// </summary>
    public async Task<AuditRow?> CreateAsync(Guid teamId, Guid modelId, Guid imageSetId, int itemsTotal, int chunkSize,
        string policyJson, CancellationToken ct)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(chunkSize, 1);
        var chunks = (itemsTotal + chunkSize - 1) / chunkSize;
        await using var conn = await db.OpenConnectionAsync(ct);
        await using var tx = await conn.BeginTransactionAsync(ct);
        var row = await conn.QuerySingleOrDefaultAsync<AuditRow>(new CommandDefinition(
            $"""
            INSERT INTO audits (id, team_id, model_id, image_set_id, state, items_total, chunk_size, chunks_total, policy)
            SELECT @id, @teamId, m.id, s.id, 'queued', @itemsTotal, @chunkSize, @chunks, @policyJson::jsonb
            FROM models m, image_sets s
            WHERE m.id = @modelId AND m.team_id = @teamId AND s.id = @imageSetId AND s.team_id = @teamId
            RETURNING {Columns}
            """, new { id = Guid.CreateVersion7(), teamId, modelId, imageSetId, itemsTotal, chunkSize, chunks, policyJson },
            tx, cancellationToken: ct));
        if (row is null) return null;
        await conn.ExecuteAsync(new CommandDefinition(
            """
            INSERT INTO audit_chunks (audit_id, chunk_index, start_item, item_count, state)
            SELECT @id, i, i * @chunkSize, LEAST(@chunkSize, @itemsTotal - i * @chunkSize), 'pending'
            FROM generate_series(0, @chunks - 1) AS i
            """, new { id = row.Id, chunkSize, itemsTotal, chunks }, tx, cancellationToken: ct));
        await tx.CommitAsync(ct);
        return row;
    }

    public async Task<AuditRow?> GetAsync(Guid teamId, Guid id, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<AuditRow>(new CommandDefinition(
            $"SELECT {Columns} FROM audits WHERE id = @id AND team_id = @teamId",
            new { id, teamId }, cancellationToken: ct));
    }

    /// <summary>The audit.json text, or null when the audit is not the team's or not finished.</summary>
    public async Task<string?> ResultAsync(Guid teamId, Guid id, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<string>(new CommandDefinition(
            "SELECT result::text FROM audits WHERE id = @id AND team_id = @teamId AND state = 'done'",
            new { id, teamId }, cancellationToken: ct));
    }

    /// <summary>Per-attribute leakage scores of a finished audit of the team (empty otherwise).</summary>
    public async Task<IReadOnlyList<AttributeScoreRow>> ScoresAsync(Guid teamId, Guid id, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<AttributeScoreRow>(new CommandDefinition(
            """
            SELECT s.attribute AS Attribute, s.leakage AS Leakage, s.verdict AS Verdict, s.measures::text AS MeasuresJson
            FROM attribute_scores s JOIN audits a ON a.id = s.audit_id
            WHERE s.audit_id = @id AND a.team_id = @teamId
            ORDER BY s.leakage DESC, s.attribute
            """, new { id, teamId }, cancellationToken: ct))).ToList();
    }

    public async Task<IReadOnlyList<AuditRow>> ListAsync(Guid teamId, AuditFilter filter, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<AuditRow>(new CommandDefinition(
            $"""
            SELECT {Columns} FROM audits
            WHERE team_id = @teamId
              AND (@modelId::uuid IS NULL OR model_id = @modelId)
              AND (@imageSetId::uuid IS NULL OR image_set_id = @imageSetId)
              AND (@verdict::text IS NULL OR verdict = @verdict)
              AND (@state::text IS NULL OR state = @state)
              AND (@pattern::text IS NULL
                   OR EXISTS (SELECT 1 FROM models m WHERE m.id = audits.model_id AND m.name ILIKE @pattern ESCAPE '\')
                   OR EXISTS (SELECT 1 FROM image_sets s WHERE s.id = audits.image_set_id AND s.name ILIKE @pattern ESCAPE '\')
                   OR audits.id::text LIKE @idPrefix ESCAPE '\')
            ORDER BY created_at DESC, id
            LIMIT @limit OFFSET @offset
            """, new
            {
                teamId, modelId = filter.ModelId, imageSetId = filter.ImageSetId, verdict = filter.Verdict,
                state = filter.State, limit = Math.Clamp(filter.Limit, 1, 1000), offset = Math.Max(0, filter.Offset),
                pattern = filter.Search is { Length: > 0 } q ? "%" + Like(q) + "%" : null,
                idPrefix = filter.Search is { Length: > 0 } p ? Like(p.ToLowerInvariant()) + "%" : null,
            },
            cancellationToken: ct))).ToList();
    }

    /// <summary>Cancels an unfinished audit; returns the row after the call (null when not the team's).</summary>
    public async Task<AuditRow?> CancelAsync(Guid teamId, Guid id, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await conn.ExecuteAsync(new CommandDefinition(
            """
            UPDATE audits SET state = 'cancelled', finished_at = now()
            WHERE id = @id AND team_id = @teamId AND state IN ('queued', 'running', 'merging')
            """, new { id, teamId }, cancellationToken: ct));
        return await conn.QuerySingleOrDefaultAsync<AuditRow>(new CommandDefinition(
            $"SELECT {Columns} FROM audits WHERE id = @id AND team_id = @teamId",
            new { id, teamId }, cancellationToken: ct));
    }

    // The search is text, never a pattern: LIKE's wildcards in it match themselves.
    private static string Like(string text) =>
        text.Replace("\\", "\\\\", StringComparison.Ordinal).Replace("%", "\\%", StringComparison.Ordinal).Replace("_", "\\_", StringComparison.Ordinal);
}
