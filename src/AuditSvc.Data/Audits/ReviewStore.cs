using Dapper;
using Npgsql;

namespace AuditSvc.Data.Audits;

public sealed record ReviewRow(Guid Id, Guid AuditId, int? Finding, string Reviewer, string Decision, string Note, DateTime CreatedAt);

public sealed record StoredFinding(int Ordinal, string Layer, int Unit, string Attribute, string Value,
    double? OddsRatio, double? QValue, string? Region, string DetailJson);

/// <summary>Findings of an audit and reviewers' decisions on them, scoped by the caller's team.</summary>
public sealed class ReviewStore(NpgsqlDataSource db)
{
    public async Task<IReadOnlyList<StoredFinding>?> FindingsAsync(Guid teamId, Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        if (!await OwnsAsync(conn, teamId, auditId, ct)) return null;
        return (await conn.QueryAsync<StoredFinding>(new CommandDefinition(
            """
            SELECT ordinal AS Ordinal, layer AS Layer, unit AS Unit, attribute AS Attribute, value AS Value,
                   odds_ratio AS OddsRatio, q_value AS QValue, region AS Region, detail::text AS DetailJson
            FROM findings WHERE audit_id = @auditId ORDER BY ordinal
            """, new { auditId }, cancellationToken: ct))).ToList();
    }

    /// <summary>Adds a review; null when the audit is not the team's.</summary>
    public async Task<ReviewRow?> AddAsync(Guid teamId, Guid auditId, int? finding, string reviewer, string decision, string note, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<ReviewRow>(new CommandDefinition(
            """
            INSERT INTO reviews (id, audit_id, finding, reviewer, decision, note)
            SELECT @id, a.id, @finding, @reviewer, @decision, @note FROM audits a WHERE a.id = @auditId AND a.team_id = @teamId
            RETURNING id AS Id, audit_id AS AuditId, finding AS Finding, reviewer AS Reviewer, decision AS Decision,
                      note AS Note, created_at AS CreatedAt
            """, new { id = Guid.CreateVersion7(), auditId, teamId, finding, reviewer, decision, note }, cancellationToken: ct));
    }

    public async Task<IReadOnlyList<ReviewRow>?> ListAsync(Guid teamId, Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        if (!await OwnsAsync(conn, teamId, auditId, ct)) return null;
        return (await conn.QueryAsync<ReviewRow>(new CommandDefinition(
            """
            SELECT id AS Id, audit_id AS AuditId, finding AS Finding, reviewer AS Reviewer, decision AS Decision,
                   note AS Note, created_at AS CreatedAt
            FROM reviews WHERE audit_id = @auditId ORDER BY created_at
            """, new { auditId }, cancellationToken: ct))).ToList();
    }

    private static Task<bool> OwnsAsync(NpgsqlConnection conn, Guid teamId, Guid auditId, CancellationToken ct) =>
        conn.ExecuteScalarAsync<bool>(new CommandDefinition(
            "SELECT EXISTS (SELECT 1 FROM audits WHERE id = @auditId AND team_id = @teamId)",
            new { auditId, teamId }, cancellationToken: ct));
}
