using AuditSvc.Data.Audits;
using Dapper;

namespace AuditSvc.Data.Tests.Audits;

/// <summary>Dispatch in the database: each team's window, turn by turn; what the reconciler may and may not take for lost.</summary>
public sealed class ChunkDispatchTests
{
    private static readonly CancellationToken None = CancellationToken.None;
    private static readonly TimeSpan Minute = TimeSpan.FromMinutes(1);

    [PgFact]
    public async Task Dispatch_LargeAuditThenSmallOneOfAnotherTeam_EachTeamGetsItsWindowInTurn()
    {
        await using var db = await TestDatabase.CreateAsync();
        var large = await StartedAuditAsync(db, "team-a", 20, 2);
        var small = await StartedAuditAsync(db, "team-b", 4, 2);
        var chunks = new ChunkStore(db.DataSource);

        var first = await chunks.DispatchAsync(2, None);
        var again = await chunks.DispatchAsync(2, None);
        var claim = (await chunks.ClaimAsync(large.Id, 0, Minute, None))!;
        await chunks.CompleteAsync(claim, [1], Minute, None);
        var refill = await chunks.DispatchAsync(2, None);

        Assert.Equal([(large.Id, 0), (small.Id, 0), (large.Id, 1), (small.Id, 1)], first);
        Assert.Empty(again); // both windows are full: nothing more until a chunk ends
        Assert.Equal([(large.Id, 2)], refill);
    }

    [PgFact]
    public async Task Dispatch_ConcurrentCallers_NeverOverfillAWindow()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, "team-a", 40, 2);
        var chunks = new ChunkStore(db.DataSource);

        var all = await Task.WhenAll(Enumerable.Range(0, 8).Select(_ => Task.Run(() => chunks.DispatchAsync(3, None))));

        Assert.Equal([0, 1, 2], all.SelectMany(d => d).Select(c => c.ChunkIndex).Order());
    }

    [PgFact]
    public async Task Stale_ChunksWaitingForTheirWindow_AreNotTakenForLost()
    {
        await using var db = await TestDatabase.CreateAsync();
        var audit = await StartedAuditAsync(db, "team-a", 20, 2);
        var chunks = new ChunkStore(db.DataSource);
        await chunks.DispatchAsync(2, None);
        await AgeAsync(db, audit.Id, TimeSpan.FromHours(1));

        var stale = await chunks.StaleAsync(Minute, None);

        // Chunks 0 and 1 were handed over an hour ago and no worker took them: their jobs are gone, hand them over again.
        // Chunks 2 to 9 were never handed over: they wait for the window, which is normal.
        Assert.Equal([(audit.Id, 0), (audit.Id, 1)], stale.Chunks.Order());
        Assert.Empty((await chunks.StaleAsync(Minute, None)).Chunks); // handed over again just now: not stale twice
    }

    [PgFact]
    public async Task Dispatch_AuditCancelled_ItsPlaceGoesToTheTeamsNextAudit()
    {
        await using var db = await TestDatabase.CreateAsync();
        var seed = await Seed.CreateAsync(db, "team-a", 10);
        var chunks = new ChunkStore(db.DataSource);
        var first = (await chunks.StartAsync((await seed.AuditAsync(db, 5)).Id, None))!;
        var second = (await chunks.StartAsync((await seed.AuditAsync(db, 5)).Id, None))!;
        Assert.Equal([(first.Id, 0), (second.Id, 0)], (await chunks.DispatchAsync(2, None)).OrderBy(c => c.AuditId == second.Id));

        await new AuditStore(db.DataSource).CancelAsync(seed.Team.Id, first.Id, None);

        Assert.Equal([(second.Id, 1)], await chunks.DispatchAsync(2, None));
    }

    private static async Task<AuditRow> StartedAuditAsync(TestDatabase db, string team, int items, int chunkSize)
    {
        var seed = await Seed.CreateAsync(db, team, items);
        var audit = await seed.AuditAsync(db, chunkSize);
        return (await new ChunkStore(db.DataSource).StartAsync(audit.Id, None))!;
    }

    // Stands in for time passing: the hand-over happened long ago.
    private static async Task AgeAsync(TestDatabase db, Guid auditId, TimeSpan age)
    {
        await using var conn = await db.DataSource.OpenConnectionAsync();
        await conn.ExecuteAsync("UPDATE audit_chunks SET dispatched_at = dispatched_at - @age WHERE audit_id = @auditId AND dispatched_at IS NOT NULL",
            new { auditId, age });
    }
}
