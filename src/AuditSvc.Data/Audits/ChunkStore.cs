using System.Data;
using System.Runtime.CompilerServices;
using Dapper;
using Npgsql;

namespace AuditSvc.Data.Audits;

/// <summary>A chunk this worker holds: the token proves ownership until the lease runs out.</summary>
public sealed record ChunkClaim(Guid AuditId, int ChunkIndex, int StartItem, int ItemCount, int Attempt, Guid Token);

/// <summary>What completing a chunk did: whether the result was taken, and whether this call closed the audit's last chunk.</summary>
public sealed record ChunkCompletion(bool Accepted, bool LastChunk);

/// <summary>
/// The work-queue side of audits, used by jobs (which act on ids, not on a caller's team). Every write is
/// conditional on the state it expects, so a job that runs twice, or late, changes nothing the second time.
/// </summary>
public sealed class ChunkStore(NpgsqlDataSource db)
{
    /// <summary>queued → running; false when the audit is already past queued (or gone).</summary>
    public async Task<AuditRow?> StartAsync(Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await conn.ExecuteAsync(new CommandDefinition(
            "UPDATE audits SET state = 'running', started_at = now() WHERE id = @auditId AND state = 'queued'",
            new { auditId }, cancellationToken: ct));
        return await conn.QuerySingleOrDefaultAsync<AuditRow>(new CommandDefinition(
            $"SELECT {AuditStore.Columns} FROM audits WHERE id = @auditId", new { auditId }, cancellationToken: ct));
    }

    /// <summary>Indices of chunks not yet done.</summary>
    public async Task<IReadOnlyList<int>> OpenChunksAsync(Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return (await conn.QueryAsync<int>(new CommandDefinition(
            "SELECT chunk_index FROM audit_chunks WHERE audit_id = @auditId AND state <> 'done' ORDER BY chunk_index",
            new { auditId }, cancellationToken: ct))).ToList();
    }

    /// <summary>Advisory lock key of the dispatch: "AuditDsp" in ASCII, apart from the migrations' key.</summary>
    internal const long DispatchLockKey = 0x4175646974447370;

    /// <summary>
    /// Marks the next chunks to hand to the job queue, fairly between teams (<see cref="FairShare"/>), and returns them
    /// in the order to enqueue. Under one lock for every caller, so two workers dispatching at once never overfill a
    /// window. A chunk marked here whose job never reaches the queue (the process died in between) is handed over
    /// again by <see cref="StaleAsync"/> after a lease.
    /// </summary>
    public async Task<IReadOnlyList<(Guid AuditId, int ChunkIndex)>> DispatchAsync(int window, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await using var tx = await conn.BeginTransactionAsync(ct);
        await conn.ExecuteAsync(new CommandDefinition("SELECT pg_advisory_xact_lock(@key)", new { key = DispatchLockKey }, tx, cancellationToken: ct));
        var open = (await conn.QueryAsync<OpenAudit>(new CommandDefinition(
            """
            SELECT a.team_id AS TeamId, a.id AS AuditId, a.created_at AS CreatedAt,
                   count(*) FILTER (WHERE c.state = 'running' OR c.dispatched_at IS NOT NULL)::int AS InFlight,
                   count(*) FILTER (WHERE c.state = 'pending' AND c.dispatched_at IS NULL)::int AS Waiting
            FROM audits a JOIN audit_chunks c ON c.audit_id = a.id
            WHERE a.state = 'running' AND c.state <> 'done'
            GROUP BY a.team_id, a.id, a.created_at
            """, transaction: tx, cancellationToken: ct))).ToList();
        var plan = FairShare.Plan(open, window);
        if (plan.Count == 0) return [];
        var picked = new Dictionary<Guid, Queue<int>>();
        foreach (var (auditId, count) in plan.CountBy(a => a))
        {
            var indices = await conn.QueryAsync<int>(new CommandDefinition(
                """
                UPDATE audit_chunks SET dispatched_at = now(), updated_at = now()
                WHERE audit_id = @auditId AND chunk_index IN (
                    SELECT chunk_index FROM audit_chunks
                    WHERE audit_id = @auditId AND state = 'pending' AND dispatched_at IS NULL
                    ORDER BY chunk_index LIMIT @count)
                RETURNING chunk_index
                """, new { auditId, count }, tx, cancellationToken: ct));
            picked[auditId] = new Queue<int>(indices.Order());
        }
        await tx.CommitAsync(ct);
        var order = new List<(Guid, int)>(plan.Count);
        foreach (var auditId in plan)
            if (picked[auditId].TryDequeue(out var index)) order.Add((auditId, index));
        return order;
    }

    /// <summary>
    /// Takes the chunk when it is pending, or running under a lease that has run out (its worker died).
    /// Null when the audit is not running, the chunk is done, or a live worker holds it.
    /// </summary>
    public async Task<ChunkClaim?> ClaimAsync(Guid auditId, int chunkIndex, TimeSpan lease, CancellationToken ct)
    {
        var token = Guid.NewGuid();
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<ChunkClaim>(new CommandDefinition(
            """
            UPDATE audit_chunks c
            SET state = 'running', attempt = c.attempt + 1, lease_token = @token,
                lease_until = now() + @lease, updated_at = now()
            FROM audits a
            WHERE c.audit_id = @auditId AND c.chunk_index = @chunkIndex AND a.id = c.audit_id AND a.state = 'running'
              AND (c.state = 'pending' OR (c.state = 'running' AND c.lease_until < now()))
            RETURNING c.audit_id AS AuditId, c.chunk_index AS ChunkIndex, c.start_item AS StartItem,
                      c.item_count AS ItemCount, c.attempt AS Attempt, c.lease_token AS Token
            """, new { auditId, chunkIndex, token, lease }, cancellationToken: ct));
    }

    /// <summary>Slides the lease on; false when the chunk is no longer this claim's (it expired and was taken, or the audit ended).</summary>
    public async Task<bool> ExtendAsync(ChunkClaim claim, TimeSpan lease, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.ExecuteAsync(new CommandDefinition(
            """
            UPDATE audit_chunks c SET lease_until = now() + @lease, updated_at = now()
            FROM audits a
            WHERE a.id = c.audit_id AND a.state = 'running'
              AND c.audit_id = @AuditId AND c.chunk_index = @ChunkIndex AND c.state = 'running' AND c.lease_token = @Token
            """, new { claim.AuditId, claim.ChunkIndex, claim.Token, lease }, cancellationToken: ct)) == 1;
    }

    /// <summary>Gives the chunk back after a failed attempt, so a retry can take it at once instead of after the lease.</summary>
    public async Task ReleaseAsync(ChunkClaim claim, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await conn.ExecuteAsync(new CommandDefinition(
            """
            UPDATE audit_chunks SET state = 'pending', lease_token = NULL, lease_until = NULL, updated_at = now()
            WHERE audit_id = @AuditId AND chunk_index = @ChunkIndex AND state = 'running' AND lease_token = @Token
            """, new { claim.AuditId, claim.ChunkIndex, claim.Token }, cancellationToken: ct));
    }

    /// <summary>
    /// Stores the result and counts the chunk, in one transaction and only while the claim still holds, so
    /// each item is counted once. The call that brings chunks_done to chunks_total moves the audit to
    /// merging and is told so: that caller (and only it) enqueues the merge.
    /// </summary>
    public async Task<ChunkCompletion> CompleteAsync(ChunkClaim claim, byte[] result, TimeSpan mergeGrace, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await using var tx = await conn.BeginTransactionAsync(ct);
        var taken = await conn.ExecuteAsync(new CommandDefinition(
            """
            UPDATE audit_chunks SET state = 'done', result = @result, lease_token = NULL, lease_until = NULL, updated_at = now()
            WHERE audit_id = @AuditId AND chunk_index = @ChunkIndex AND state = 'running' AND lease_token = @Token
            """, new { claim.AuditId, claim.ChunkIndex, claim.Token, result }, tx, cancellationToken: ct));
        if (taken == 0) return new ChunkCompletion(false, false);
        var last = await conn.QuerySingleOrDefaultAsync<bool?>(new CommandDefinition(
            """
            UPDATE audits SET chunks_done = chunks_done + 1, items_done = items_done + @ItemCount,
                state = CASE WHEN chunks_done + 1 = chunks_total THEN 'merging' ELSE state END,
                merge_lease_until = CASE WHEN chunks_done + 1 = chunks_total THEN now() + @mergeGrace ELSE NULL END
            WHERE id = @AuditId AND state = 'running'
            RETURNING state = 'merging'
            """, new { claim.AuditId, claim.ItemCount, mergeGrace }, tx, cancellationToken: ct));
        if (last is null) return new ChunkCompletion(false, false); // cancelled meanwhile: roll back, count nothing
        await tx.CommitAsync(ct);
        return new ChunkCompletion(true, last.Value);
    }

    /// <summary>
    /// Takes the merge of an audit in merging whose merge lease is free or expired (or any, with
    /// <paramref name="force"/>); returns the attempt number, or null when the merge is not to be taken.
    /// </summary>
    /// <summary>True once the audit was cancelled (a merge in progress stops at its next check).</summary>
    public async Task<bool> IsCancelledAsync(Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.ExecuteScalarAsync<bool>(new CommandDefinition(
            "SELECT EXISTS (SELECT 1 FROM audits WHERE id = @auditId AND state = 'cancelled')", new { auditId }, cancellationToken: ct));
    }

    public async Task<int?> ClaimMergeAsync(Guid auditId, TimeSpan lease, bool force, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.QuerySingleOrDefaultAsync<int?>(new CommandDefinition(
            """
            UPDATE audits SET merge_lease_until = now() + @lease, merge_attempts = merge_attempts + 1
            WHERE id = @auditId AND state = 'merging'
              AND (@force OR merge_lease_until IS NULL OR merge_lease_until < now())
            RETURNING merge_attempts
            """, new { auditId, lease, force }, cancellationToken: ct));
    }

    /// <summary>
    /// The done chunks' results in chunk order, one at a time: each is streamed from the row (sequential access, never
    /// buffered whole) into <paramref name="parse"/>, and the next row is read only when the caller asks for it, so a
    /// merge holds one chunk however many the audit has. The stream is readable only inside <paramref name="parse"/>.
    /// </summary>
    public async IAsyncEnumerable<T> ReadResultsAsync<T>(Guid auditId, Func<Stream, T> parse, [EnumeratorCancellation] CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await using var cmd = new NpgsqlCommand(
            "SELECT result FROM audit_chunks WHERE audit_id = $1 AND state = 'done' ORDER BY chunk_index", conn);
        cmd.Parameters.Add(new NpgsqlParameter { Value = auditId });
        await using var reader = await cmd.ExecuteReaderAsync(CommandBehavior.SequentialAccess, ct);
        while (await reader.ReadAsync(ct))
        {
            T item;
            await using (var column = await reader.GetStreamAsync(0, ct))
            await using (var buffered = new BufferedStream(column, 1 << 16))
                item = parse(buffered);
            yield return item;
        }
    }

    /// <summary>merging → done with audit.json, verdict, findings and scores; false when already finished or cancelled.</summary>
    public async Task<bool> FinishAsync(Guid auditId, AuditOutcome outcome, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await using var tx = await conn.BeginTransactionAsync(ct);
        var done = await conn.ExecuteAsync(new CommandDefinition(
            """
            UPDATE audits SET state = 'done', result = @ResultJson::json, verdict = @Verdict, finished_at = now(),
                merge_lease_until = NULL
            WHERE id = @auditId AND state = 'merging'
            """, new { auditId, outcome.ResultJson, outcome.Verdict }, tx, cancellationToken: ct));
        if (done == 0) return false;
        await conn.ExecuteAsync(new CommandDefinition(
            """
            INSERT INTO findings (audit_id, ordinal, layer, unit, attribute, value, odds_ratio, q_value, region, detail)
            VALUES (@auditId, @Ordinal, @Layer, @Unit, @Attribute, @Value, @OddsRatio, @QValue, @Region, @DetailJson::jsonb)
            ON CONFLICT DO NOTHING
            """, outcome.Findings.Select(f => new { auditId, f.Ordinal, f.Layer, f.Unit, f.Attribute, f.Value, f.OddsRatio, f.QValue, f.Region, f.DetailJson }),
            tx, cancellationToken: ct));
        await conn.ExecuteAsync(new CommandDefinition(
            """
            INSERT INTO attribute_scores (audit_id, attribute, leakage, verdict, measures)
            VALUES (@auditId, @Attribute, @Leakage, @Verdict, @MeasuresJson::jsonb)
            ON CONFLICT DO NOTHING
            """, outcome.Scores.Select(s => new { auditId, s.Attribute, s.Leakage, s.Verdict, s.MeasuresJson }),
            tx, cancellationToken: ct));
        await tx.CommitAsync(ct);
        return true;
    }

    /// <summary>Marks an unfinished audit failed with a reason.</summary>
    public async Task FailAsync(Guid auditId, string error, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        await conn.ExecuteAsync(new CommandDefinition(
            """
            UPDATE audits SET state = 'failed', error = @error, finished_at = now()
            WHERE id = @auditId AND state IN ('queued', 'running', 'merging')
            """, new { auditId, error }, cancellationToken: ct));
    }

    /// <summary>
    /// Work a dead worker or a lost hand-over left behind: chunks whose lease ran out; chunks dispatched more than
    /// <paramref name="grace"/> ago that no worker has taken (their job never reached the queue, or failed for good:
    /// they are marked dispatched again now, so each is handed over once per grace); merges never taken; audits never
    /// started. Chunks not yet dispatched are not here: waiting for their team's window is normal.
    /// </summary>
    public async Task<StaleWork> StaleAsync(TimeSpan grace, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        var chunks = (await conn.QueryAsync<(Guid, int)>(new CommandDefinition(
            """
            SELECT c.audit_id, c.chunk_index FROM audit_chunks c JOIN audits a ON a.id = c.audit_id
            WHERE a.state = 'running' AND c.state = 'running' AND c.lease_until < now()
            """, cancellationToken: ct))).ToList();
        chunks.AddRange(await conn.QueryAsync<(Guid, int)>(new CommandDefinition(
            """
            UPDATE audit_chunks c SET dispatched_at = now()
            FROM audits a
            WHERE a.id = c.audit_id AND a.state = 'running' AND c.state = 'pending' AND c.dispatched_at < now() - @grace
            RETURNING c.audit_id, c.chunk_index
            """, new { grace }, cancellationToken: ct)));
        var merges = await conn.QueryAsync<Guid>(new CommandDefinition(
            "SELECT id FROM audits WHERE state = 'merging' AND merge_lease_until < now()", cancellationToken: ct));
        var starts = await conn.QueryAsync<Guid>(new CommandDefinition(
            "SELECT id FROM audits WHERE state = 'queued' AND created_at < now() - @grace",
            new { grace }, cancellationToken: ct));
        return new StaleWork(chunks, merges.ToList(), starts.ToList());
    }
}

public sealed record StaleWork(IReadOnlyList<(Guid AuditId, int ChunkIndex)> Chunks, IReadOnlyList<Guid> Merges, IReadOnlyList<Guid> Starts);
