using Dapper;
using Npgsql;

namespace AuditSvc.Data.Audits;

/// <summary>The API key that signed a review: what `keys list` shows of it.</summary>
public sealed record ReviewSigner(Guid KeyId, string Name, string Prefix)
{
    public string Display => $"{Name} ({Prefix})";
}

/// <summary>
/// One review as stored. <see cref="Subject"/> is <c>finding</c>, <c>cue</c>, <c>verdict</c> (an override) or, on old
/// rows only, <c>audit</c>. Signed rows have a <see cref="Signer"/>; rows written before reviews were signed have
/// only the free-text name they were sent with (<see cref="LegacyReviewer"/>).
/// </summary>
public sealed record ReviewRow(Guid Id, Guid AuditId, string Subject, int? Finding, string? Cue, string? Verdict,
    string Decision, string Note, DateTime CreatedAt, ReviewSigner? Signer, string? LegacyReviewer, Guid? Supersedes, Guid? SupersededBy)
{
    public bool Signed => Signer is not null;

    /// <summary>Who decided, for display: the signing key's name and prefix, or an old row's free text.</summary>
    public string Reviewer => Signer?.Display ?? LegacyReviewer ?? "";
}

/// <summary>A review to add, signed by <paramref name="KeyId"/>; exactly one of finding, cue and verdict is given.</summary>
public sealed record NewReview(Guid KeyId, int? Finding, string? Cue, string? Verdict, string Decision, string Reason);

/// <summary>A review in the audit's history with the later review of the same subject that replaced it, if any.</summary>
public sealed record ReviewHistoryEntry(ReviewRow Review, ReviewRow? SupersededBy);

/// <summary>The engine's verdict and the one that stands: the latest override's when there is one.</summary>
public sealed record EffectiveVerdict(Guid AuditId, string State, string? EngineVerdict, string? Verdict, ReviewRow? Override);

public enum ReviewRefusal { None, AuditNotFound, AuditNotDone, UnknownFinding, UnknownCue, VerdictUnchanged, KeyNotOfTeam }

/// <summary>The stored review, or why it was refused (and the audit's state and verdict, to say so).</summary>
public sealed record ReviewAdded(ReviewRow? Review, ReviewRefusal Refusal, string? State = null, string? EngineVerdict = null);

/// <summary>The decisions of signed reviews (migration 0003), and the words old rows were written with.</summary>
public static class ReviewDecisions
{
    public const string Spurious = "spurious";
    public const string Acceptable = "acceptable";
    public const string NeedsData = "needs-data";
    public const string Override = "override";

    /// <summary>Decisions on one cue or one finding.</summary>
    public static readonly IReadOnlyList<string> OnCue = [Spurious, Acceptable, NeedsData];

    public static readonly IReadOnlyList<string> All = [.. OnCue, Override];

    /// <summary>Words of unsigned rows recorded before migration 0003; never accepted for new reviews.</summary>
    public static readonly IReadOnlyList<string> Legacy = ["confirmed", "dismissed", "note", "spurious-cue", "needs-more-data"];

    /// <summary>Decisions that must carry a reason.</summary>
    public static bool NeedsReason(string decision) => decision is Acceptable or Override;
}

public sealed record StoredFinding(int Ordinal, string Layer, int Unit, string Attribute, string Value,
    double? OddsRatio, double? QValue, string? Region, string DetailJson);

/// <summary>
/// Findings of an audit and the signed, append-only history of reviewers' decisions on them, scoped by the caller's
/// team. The database links each review to the one it supersedes and refuses UPDATE and DELETE (migration 0003).
/// </summary>
public sealed class ReviewStore(NpgsqlDataSource db)
{
    private const string RowSql = """
        SELECT r.id AS Id, r.audit_id AS AuditId, r.subject AS Subject, r.finding AS Finding, r.cue AS Cue, r.verdict AS Verdict,
               r.decision AS Decision, r.note AS Note, r.created_at AS CreatedAt, r.key_id AS KeyId, k.name AS KeyName,
               k.prefix AS KeyPrefix, r.reviewer AS LegacyReviewer, r.supersedes AS Supersedes,
               CASE WHEN r.subject <> 'audit' THEN COALESCE(
                   (SELECT s.id FROM reviews s WHERE s.supersedes = r.id),
                   LEAD(r.id) OVER (PARTITION BY r.subject, r.finding, r.cue ORDER BY r.created_at, r.id)) END AS SupersededBy
        FROM reviews r LEFT JOIN api_keys k ON k.id = r.key_id
        """;

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

    /// <summary>
    /// Adds a review signed by the key, after checking that its subject exists in this audit: the finding's ordinal,
    /// the cue among the audit's attribute values, or, for an override, a done audit whose engine verdict differs.
    /// </summary>
    public async Task<ReviewAdded> AddAsync(Guid teamId, Guid auditId, NewReview review, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(review);
        await using var conn = await db.OpenConnectionAsync(ct);
        await using var tx = await conn.BeginTransactionAsync(ct);
        var audit = await conn.QuerySingleOrDefaultAsync<AuditState>(new CommandDefinition(
            "SELECT state AS State, verdict AS Verdict FROM audits WHERE id = @auditId AND team_id = @teamId",
            new { auditId, teamId }, tx, cancellationToken: ct));
        if (audit is not { } a) return new ReviewAdded(null, ReviewRefusal.AuditNotFound);
        if (review.Verdict is { } wanted)
        {
            if (a.State != "done" || a.Verdict is null) return new ReviewAdded(null, ReviewRefusal.AuditNotDone, a.State);
            if (wanted == a.Verdict) return new ReviewAdded(null, ReviewRefusal.VerdictUnchanged, a.State, a.Verdict);
        }
        if (review.Finding is { } ordinal && !await conn.ExecuteScalarAsync<bool>(new CommandDefinition(
                "SELECT EXISTS (SELECT 1 FROM findings WHERE audit_id = @auditId AND ordinal = @ordinal)",
                new { auditId, ordinal }, tx, cancellationToken: ct)))
            return new ReviewAdded(null, ReviewRefusal.UnknownFinding, a.State);
        if (review.Cue is { } cue && !await CueExistsAsync(conn, tx, auditId, cue, ct))
            return new ReviewAdded(null, ReviewRefusal.UnknownCue, a.State);

        // The key must be the team's and live; the insert trigger links the previous review of the subject.
        var id = await conn.QuerySingleOrDefaultAsync<Guid?>(new CommandDefinition(
            """
            INSERT INTO reviews (id, audit_id, finding, cue, verdict, key_id, decision, note)
            SELECT @id, @auditId, @finding, @cue, @verdict, k.id, @decision, @reason
            FROM api_keys k WHERE k.id = @keyId AND k.team_id = @teamId AND k.revoked_at IS NULL
            RETURNING id
            """, new
            {
                id = Guid.CreateVersion7(), auditId, teamId, finding = review.Finding, cue = review.Cue, verdict = review.Verdict,
                keyId = review.KeyId, decision = review.Decision, reason = review.Reason,
            }, tx, cancellationToken: ct));
        if (id is null) return new ReviewAdded(null, ReviewRefusal.KeyNotOfTeam, a.State);
        var row = (await RowsAsync(conn, tx, auditId, ct)).Single(r => r.Id == id);
        await tx.CommitAsync(ct);
        return new ReviewAdded(row, ReviewRefusal.None, a.State, a.Verdict);
    }

    /// <summary>Every review of the audit, oldest first; null when the audit is not the team's.</summary>
    public async Task<IReadOnlyList<ReviewRow>?> ListAsync(Guid teamId, Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        if (!await OwnsAsync(conn, teamId, auditId, ct)) return null;
        return await RowsAsync(conn, null, auditId, ct);
    }

    /// <summary>The audit's review history, oldest first, each entry with the review that superseded it; null when not the team's.</summary>
    public async Task<IReadOnlyList<ReviewHistoryEntry>?> HistoryAsync(Guid teamId, Guid auditId, CancellationToken ct)
    {
        if (await ListAsync(teamId, auditId, ct) is not { } rows) return null;
        var byId = rows.ToDictionary(r => r.Id);
        return rows.Select(r => new ReviewHistoryEntry(r, r.SupersededBy is { } s ? byId.GetValueOrDefault(s) : null)).ToList();
    }

    /// <summary>The override in force among an audit's reviews (in the order they were recorded): the latest one.</summary>
    public static ReviewRow? LatestOverride(IEnumerable<ReviewRow> rows) => rows.LastOrDefault(r => r.Subject == "verdict");

    /// <summary>The engine's verdict, the latest override of it and the verdict that stands; null when not the team's.</summary>
    public async Task<EffectiveVerdict?> EffectiveVerdictAsync(Guid teamId, Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        var audit = await conn.QuerySingleOrDefaultAsync<AuditState>(new CommandDefinition(
            "SELECT state AS State, verdict AS Verdict FROM audits WHERE id = @auditId AND team_id = @teamId",
            new { auditId, teamId }, cancellationToken: ct));
        if (audit is not { } a) return null;
        var latest = LatestOverride(await RowsAsync(conn, null, auditId, ct));
        return new EffectiveVerdict(auditId, a.State, a.Verdict, a.Verdict is null ? null : latest?.Verdict ?? a.Verdict, latest);
    }

    /// <summary>The verdict each of these audits was overridden to (the latest override), for audits that have one.</summary>
    public async Task<IReadOnlyDictionary<Guid, string>> OverriddenVerdictsAsync(Guid teamId, IReadOnlyCollection<Guid> auditIds, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(auditIds);
        if (auditIds.Count == 0) return new Dictionary<Guid, string>();
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<(Guid AuditId, string Verdict)>(new CommandDefinition(
            """
            SELECT DISTINCT ON (r.audit_id) r.audit_id, r.verdict
            FROM reviews r JOIN audits a ON a.id = r.audit_id
            WHERE a.team_id = @teamId AND r.audit_id = ANY(@ids) AND r.verdict IS NOT NULL
            ORDER BY r.audit_id, r.created_at DESC, r.id DESC
            """, new { teamId, ids = auditIds.ToArray() }, cancellationToken: ct))).ToDictionary(r => r.AuditId, r => r.Verdict);
    }

    private static async Task<bool> CueExistsAsync(NpgsqlConnection conn, NpgsqlTransaction tx, Guid auditId, string cue, CancellationToken ct)
    {
        var findings = await conn.QueryAsync<(string, string)>(new CommandDefinition(
            "SELECT attribute, value FROM findings WHERE audit_id = @auditId", new { auditId }, tx, cancellationToken: ct));
        var keys = ReviewSubjects.Cues(findings, null);
        if (keys.Contains(cue)) return true;
        var result = await conn.ExecuteScalarAsync<string?>(new CommandDefinition(
            "SELECT result::text FROM audits WHERE id = @auditId", new { auditId }, tx, cancellationToken: ct));
        return ReviewSubjects.Cues([], result).Contains(cue);
    }

    private static async Task<IReadOnlyList<ReviewRow>> RowsAsync(NpgsqlConnection conn, NpgsqlTransaction? tx, Guid auditId, CancellationToken ct) =>
        (await conn.QueryAsync<Flat>(new CommandDefinition(
            $"{RowSql} WHERE r.audit_id = @auditId ORDER BY r.created_at, r.id", new { auditId }, tx, cancellationToken: ct)))
        .Select(f => new ReviewRow(f.Id, f.AuditId, f.Subject, f.Finding, f.Cue, f.Verdict, f.Decision, f.Note, f.CreatedAt,
            f.KeyId is { } k ? new ReviewSigner(k, f.KeyName ?? "", f.KeyPrefix ?? "") : null, f.LegacyReviewer, f.Supersedes, f.SupersededBy))
        .ToList();

    private static Task<bool> OwnsAsync(NpgsqlConnection conn, Guid teamId, Guid auditId, CancellationToken ct) =>
        conn.ExecuteScalarAsync<bool>(new CommandDefinition(
            "SELECT EXISTS (SELECT 1 FROM audits WHERE id = @auditId AND team_id = @teamId)",
            new { auditId, teamId }, cancellationToken: ct));

    private sealed class AuditState
    {
        public string State { get; set; } = "";
        public string? Verdict { get; set; }
    }

    private sealed class Flat
    {
        public Guid Id { get; set; }
        public Guid AuditId { get; set; }
        public string Subject { get; set; } = "";
        public int? Finding { get; set; }
        public string? Cue { get; set; }
        public string? Verdict { get; set; }
        public string Decision { get; set; } = "";
        public string Note { get; set; } = "";
        public DateTime CreatedAt { get; set; }
        public Guid? KeyId { get; set; }
        public string? KeyName { get; set; }
        public string? KeyPrefix { get; set; }
        public string? LegacyReviewer { get; set; }
        public Guid? Supersedes { get; set; }
        public Guid? SupersededBy { get; set; }
    }
}
