using AuditSvc.Data.Audits;
using Dapper;

namespace AuditSvc.Data.Tests.Audits;

public sealed class ChunkStoreTests
{
    private static readonly CancellationToken None = CancellationToken.None;
    private static readonly TimeSpan Minute = TimeSpan.FromMinutes(1);

    [PgFact]
    public async Task Claim_ChunkHeldUnderLiveLease_ReturnsNull()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, 10, 5);
        var chunks = new ChunkStore(db.DataSource);

        Assert.NotNull(await chunks.ClaimAsync(audit.Id, 0, Minute, None));
        Assert.Null(await chunks.ClaimAsync(audit.Id, 0, Minute, None));
    }

    [PgFact]
    public async Task Claim_AuditStillQueued_ReturnsNull()
    {
        await using var db = await TestDatabase.CreateAsync();
        var seed = await Seed.CreateAsync(db, "team-a");
        var audit = await seed.AuditAsync(db, 5);

        Assert.Null(await new ChunkStore(db.DataSource).ClaimAsync(audit.Id, 0, Minute, None));
    }

    [PgFact]
    public async Task Complete_AfterLeaseExpiredAndChunkRetaken_IsRejectedAndCountsOnce()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, 10, 5);
        var chunks = new ChunkStore(db.DataSource);
        var dead = (await chunks.ClaimAsync(audit.Id, 0, Minute, None))!;
        await ExpireLeasesAsync(db, audit.Id);

        var retry = (await chunks.ClaimAsync(audit.Id, 0, Minute, None))!;
        var late = await chunks.CompleteAsync(dead, [1], Minute, None);
        var live = await chunks.CompleteAsync(retry, [2], Minute, None);
        var again = await chunks.CompleteAsync(retry, [3], Minute, None);

        Assert.Equal(2, retry.Attempt);
        Assert.False(late.Accepted);
        Assert.True(live.Accepted);
        Assert.False(again.Accepted);
        Assert.False(await chunks.ExtendAsync(dead, Minute, None));
        var row = await new AuditStore(db.DataSource).GetAsync(audit.TeamId, audit.Id, None);
        Assert.Equal((5, 1), (row!.ItemsDone, row.ChunksDone));
    }

    [PgFact]
    public async Task Complete_ManyChunksAtOnce_ExactlyOneSeesTheLast()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, 40, 2);
        var chunks = new ChunkStore(db.DataSource);
        var claims = new List<ChunkClaim>();
        for (var i = 0; i < audit.ChunksTotal; i++) claims.Add((await chunks.ClaimAsync(audit.Id, i, Minute, None))!);

        var results = await Task.WhenAll(claims.Select(c => Task.Run(() => chunks.CompleteAsync(c, [(byte)c.ChunkIndex], Minute, None))));

        Assert.All(results, r => Assert.True(r.Accepted));
        Assert.Single(results, r => r.LastChunk);
        var row = (await new AuditStore(db.DataSource).GetAsync(audit.TeamId, audit.Id, None))!;
        Assert.Equal(("merging", 40, 20), (row.State, row.ItemsDone, row.ChunksDone));
        var stored = new List<byte[]>();
        await foreach (var bytes in chunks.ReadResultsAsync(audit.Id, s => { using var ms = new MemoryStream(); s.CopyTo(ms); return ms.ToArray(); }, None))
            stored.Add(bytes);
        Assert.Equal(Enumerable.Range(0, 20).Select(i => new[] { (byte)i }), stored);
    }

    [PgFact]
    public async Task Complete_AuditCancelledMeanwhile_IsRejected()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, 10, 5);
        var chunks = new ChunkStore(db.DataSource);
        var claim = (await chunks.ClaimAsync(audit.Id, 0, Minute, None))!;
        await new AuditStore(db.DataSource).CancelAsync(audit.TeamId, audit.Id, None);

        Assert.False(await chunks.ExtendAsync(claim, Minute, None)); // the worker's heartbeat stops the chunk
        Assert.False((await chunks.CompleteAsync(claim, [1], Minute, None)).Accepted);
        Assert.Equal(0, (await new AuditStore(db.DataSource).GetAsync(audit.TeamId, audit.Id, None))!.ItemsDone);
    }

    [PgFact]
    public async Task ClaimMerge_SecondCallerWhileLeaseLive_IsRefused()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, 2, 2);
        var chunks = new ChunkStore(db.DataSource);
        var claim = (await chunks.ClaimAsync(audit.Id, 0, Minute, None))!;
        Assert.True((await chunks.CompleteAsync(claim, [1], Minute, None)).LastChunk);

        Assert.Equal(1, await chunks.ClaimMergeAsync(audit.Id, Minute, force: true, None));
        Assert.Null(await chunks.ClaimMergeAsync(audit.Id, Minute, force: false, None));
        Assert.Equal(2, await chunks.ClaimMergeAsync(audit.Id, Minute, force: true, None));
    }

    [PgFact]
    public async Task Finish_CalledTwice_WritesOnce()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, 2, 2);
        var chunks = new ChunkStore(db.DataSource);
        await chunks.CompleteAsync((await chunks.ClaimAsync(audit.Id, 0, Minute, None))!, [1], Minute, None);
        var outcome = new AuditOutcome("""{"verdict":"block"}""", "block",
            [new FindingRow(0, "conv2", 7, "stamp", "yes", 4.5, 0.001, "top-left", "{}")],
            [new AttributeScoreRow("stamp", 0.6, "block", "{}")]);

        Assert.True(await chunks.FinishAsync(audit.Id, outcome, None));
        Assert.False(await chunks.FinishAsync(audit.Id, outcome with { Verdict = "pass" }, None));

        var store = new AuditStore(db.DataSource);
        Assert.Equal("block", (await store.GetAsync(audit.TeamId, audit.Id, None))!.Verdict);
        Assert.Contains("block", await store.ResultAsync(audit.TeamId, audit.Id, None), StringComparison.Ordinal);
    }

    [PgFact]
    public async Task Stale_ChunkWhoseLeaseRanOut_IsListed()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, 10, 5);
        var chunks = new ChunkStore(db.DataSource);
        await chunks.ClaimAsync(audit.Id, 1, Minute, None);
        Assert.Empty((await chunks.StaleAsync(Minute, None)).Chunks);

        await ExpireLeasesAsync(db, audit.Id);

        Assert.Equal([(audit.Id, 1)], (await chunks.StaleAsync(Minute, None)).Chunks);
    }

    private static async Task<AuditRow> StartedAuditAsync(TestDatabase db, int items, int chunkSize)
    {
        var seed = await Seed.CreateAsync(db, "team-" + Guid.NewGuid().ToString("N")[..8], items);
        var audit = await seed.AuditAsync(db, chunkSize);
        return (await new ChunkStore(db.DataSource).StartAsync(audit.Id, None))!;
    }

    // Stands in for time passing: a worker that died leaves a lease in the past.
    private static async Task ExpireLeasesAsync(TestDatabase db, Guid auditId)
    {
        await using var conn = await db.DataSource.OpenConnectionAsync();
        await conn.ExecuteAsync("UPDATE audit_chunks SET lease_until = now() - interval '1 second' WHERE audit_id = @auditId AND state = 'running'", new { auditId });
    }
}
