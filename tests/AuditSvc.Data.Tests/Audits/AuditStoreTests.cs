using AuditSvc.Data.Audits;
using AuditSvc.Data.ImageSets;

namespace AuditSvc.Data.Tests.Audits;

public sealed class AuditStoreTests
{
    private static readonly CancellationToken None = CancellationToken.None;

    [PgFact]
    public async Task Get_AuditOfAnotherTeam_ReturnsNull()
    {
        await using var db = await TestDatabase.CreateAsync();
        var mine = await Seed.CreateAsync(db, "team-a");
        var theirs = await Seed.CreateAsync(db, "team-b");
        var audit = await theirs.AuditAsync(db, 4);
        var store = new AuditStore(db.DataSource);

        Assert.Null(await store.GetAsync(mine.Team.Id, audit.Id, None));
        Assert.Null(await store.ResultAsync(mine.Team.Id, audit.Id, None));
        Assert.Empty(await store.ListAsync(mine.Team.Id, new AuditFilter(), None));
        Assert.NotNull(await store.GetAsync(theirs.Team.Id, audit.Id, None));
    }

    [PgFact]
    public async Task Cancel_AuditOfAnotherTeam_ChangesNothing()
    {
        await using var db = await TestDatabase.CreateAsync();
        var mine = await Seed.CreateAsync(db, "team-a");
        var theirs = await Seed.CreateAsync(db, "team-b");
        var audit = await theirs.AuditAsync(db, 4);
        var store = new AuditStore(db.DataSource);

        Assert.Null(await store.CancelAsync(mine.Team.Id, audit.Id, None));

        Assert.Equal("queued", (await store.GetAsync(theirs.Team.Id, audit.Id, None))!.State);
    }

    [PgFact]
    public async Task Create_ModelOfAnotherTeam_ReturnsNull()
    {
        await using var db = await TestDatabase.CreateAsync();
        var mine = await Seed.CreateAsync(db, "team-a");
        var theirs = await Seed.CreateAsync(db, "team-b");

        Assert.Null(await new AuditStore(db.DataSource).CreateAsync(mine.Team.Id, theirs.Model.Id, mine.Set.Id, 10, 4, "{}", None));
        Assert.Null(await new AuditStore(db.DataSource).CreateAsync(mine.Team.Id, mine.Model.Id, theirs.Set.Id, 10, 4, "{}", None));
    }

    [PgFact]
    public async Task Create_TenItemsChunksOfFour_MakesChunksOfFourFourTwo()
    {
        await using var db = await TestDatabase.CreateAsync();
        var seed = await Seed.CreateAsync(db, "team-a", items: 10);

        var audit = await seed.AuditAsync(db, 4);

        Assert.Equal(("queued", 10, 3), (audit.State, audit.ItemsTotal, audit.ChunksTotal));
        var chunks = new ChunkStore(db.DataSource);
        await chunks.StartAsync(audit.Id, None);
        var claims = new List<ChunkClaim>();
        foreach (var i in await chunks.OpenChunksAsync(audit.Id, None))
            claims.Add((await chunks.ClaimAsync(audit.Id, i, TimeSpan.FromMinutes(1), None))!);
        Assert.Equal([(0, 4), (4, 4), (8, 2)], claims.Select(c => (c.StartItem, c.ItemCount)));
    }

    [PgFact]
    public async Task List_FilterByModelAndVerdict_ReturnsMatchingOnly()
    {
        await using var db = await TestDatabase.CreateAsync();
        var seed = await Seed.CreateAsync(db, "team-a");
        var a1 = await seed.AuditAsync(db, 5);
        var a2 = await seed.AuditAsync(db, 5);
        var store = new AuditStore(db.DataSource);

        Assert.Equal(2, (await store.ListAsync(seed.Team.Id, new AuditFilter(ModelId: seed.Model.Id), None)).Count);
        Assert.Empty(await store.ListAsync(seed.Team.Id, new AuditFilter(ModelId: Guid.NewGuid()), None));
        Assert.Empty(await store.ListAsync(seed.Team.Id, new AuditFilter(Verdict: "pass"), None));
        Assert.Equal([a2.Id, a1.Id], (await store.ListAsync(seed.Team.Id, new AuditFilter(ImageSetId: seed.Set.Id), None)).Select(a => a.Id));
    }

    [PgFact]
    public async Task Items_AfterAdd_ComeBackInIndexOrderWithAttributes()
    {
        await using var db = await TestDatabase.CreateAsync();
        var seed = await Seed.CreateAsync(db, "team-a", items: 5);

        var items = await new ImageSetStore(db.DataSource).ItemsAsync(seed.Set.Id, "/root", None);

        Assert.Equal([0, 1, 2, 3, 4], items.Select(i => i.Index));
        Assert.Equal([2], items[2].AttributeValues);
        Assert.Equal(Path.Combine("/root", "3.png"), items[3].Path);
    }
}
