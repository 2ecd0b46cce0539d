using Dapper;
using Npgsql;

namespace AuditSvc.Data.Audits;

public sealed record ReviewRow(Guid Id, Guid AuditId, int? Finding, string Reviewer, string Decision, string Note, DateTime CreatedAt,
    string? Cue = null);

/// <summary>What a review is about: one finding (by ordinal), a cue group (<c>attribute=value</c>), or the audit as a whole.</summary>
public sealed record NewReview(int? Finding, string? Cue, string Reviewer, string Decision, string Note);

/// <summary>The decisions the reviews table accepts (migrations 0001 and 0002).</summary>
public static class ReviewDecisions
{
    /// <summary>Decisions recorded through the REST API.</summary>
    public static readonly IReadOnlyList<string> Api = ["confirmed", "dismissed", "note"];

    /// <summary>Decisions a reviewer records on a cue group or a finding in the browser pages.</summary>
    public static readonly IReadOnlyList<string> Reviewer = ["spurious-cue", "acceptable", "needs-more-data"];

    public static readonly IReadOnlyList<string> All = [.. Api, .. Reviewer];
}

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
    public Task<ReviewRow?> AddAsync(Guid teamId, Guid auditId, int? finding, string reviewer, string decision, string note, CancellationToken ct) =>
        AddAsync(teamId, auditId, new NewReview(finding, null, reviewer, decision, note), ct);

    /// <summary>Adds a review; null when the audit is not the team's.</summary>
    public async Task<ReviewRow?> AddAsync(Guid teamId, Guid auditId, NewReview review, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(review);
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<ReviewRow>(new CommandDefinition(
            """
            INSERT INTO reviews (id, audit_id, finding, cue, reviewer, decision, note)
            SELECT @id, a.id, @finding, @cue, @reviewer, @decision, @note FROM audits a WHERE a.id = @auditId AND a.team_id = @teamId
            RETURNING id AS Id, audit_id AS AuditId, finding AS Finding, reviewer AS Reviewer, decision AS Decision,
                      note AS Note, created_at AS CreatedAt, cue AS Cue
            """, new
            {
                id = Guid.CreateVersion7(), auditId, teamId, finding = review.Finding, cue = review.Cue, reviewer = review.Reviewer,
                decision = review.Decision, note = review.Note,
            }, cancellationToken: ct));
    }

    public async Task<IReadOnlyList<ReviewRow>?> ListAsync(Guid teamId, Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        if (!await OwnsAsync(conn, teamId, auditId, ct)) return null;
        return (await conn.QueryAsync<ReviewRow>(new CommandDefinition(
            """
            SELECT id AS Id, audit_id AS AuditId, finding AS Finding, reviewer AS Reviewer, decision AS Decision,
                   note AS Note, created_at AS CreatedAt, cue AS Cue
            FROM reviews WHERE audit_id = @auditId ORDER BY created_at, id
            """, new { auditId }, cancellationToken: ct))).ToList();
    }

    private static Task<bool> OwnsAsync(NpgsqlConnection conn, Guid teamId, Guid auditId, CancellationToken ct) =>
        conn.ExecuteScalarAsync<bool>(new CommandDefinition(
            "SELECT EXISTS (SELECT 1 FROM audits WHERE id = @auditId AND team_id = @teamId)",
            new { auditId, teamId }, cancellationToken: ct));
}
