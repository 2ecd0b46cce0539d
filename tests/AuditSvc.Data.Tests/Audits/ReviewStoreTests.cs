using AuditSvc.Data.Audits;
using AuditSvc.Data.Migrations;
using AuditSvc.Data.Teams;
using Dapper;
using Npgsql;

namespace AuditSvc.Data.Tests.Audits;

public sealed class ReviewStoreTests
{
    private static readonly CancellationToken None = CancellationToken.None;

    // audit.json as the engine writes it, cut down to the parts that name cues (an invented audit).
    private const string Result = """
        {"verdict":"block",
         "image_set":{"attributes":[{"name":"belt","numeric":false,"missing":0,"values":[{"value":"blue","count":5},{"value":"grey","count":5}]}]},
         "attributes":[{"name":"stamp","cues":[{"value":"yes"}],"inferred":false},{"name":"place:top-left","cues":[],"inferred":true}],
         "findings":[{"attribute":"stamp","value":"yes"}],"cue_groups":[{"attribute":"stamp","value":"yes"}],"candidates":[]}
        """;

    private sealed record Desk(TestDatabase Db, ReviewStore Store, Seed Seed, AuditRow Audit, ApiKeyInfo Key);

    private static async Task<Desk> DeskAsync(TestDatabase db, string team = "team-a", string engineVerdict = "block")
    {
        var seed = await Seed.CreateAsync(db, team);
        var audit = await seed.AuditAsync(db, 10);
        await DoneAsync(db, audit.Id, engineVerdict);
        var (_, key) = await new ApiKeyStore(db.DataSource).CreateAsync(seed.Team.Id, "rita", None);
        return new Desk(db, new ReviewStore(db.DataSource), seed, audit, key);
    }

    private static async Task DoneAsync(TestDatabase db, Guid auditId, string verdict)
    {
        await using var conn = await db.DataSource.OpenConnectionAsync();
        await conn.ExecuteAsync("UPDATE audits SET state = 'done', verdict = @verdict, result = @Result::json WHERE id = @auditId",
            new { auditId, verdict, Result });
        await conn.ExecuteAsync(
            "INSERT INTO findings (audit_id, ordinal, layer, unit, attribute, value, detail) VALUES (@auditId, 0, 'conv1', 3, 'stamp', 'yes', '{}')",
            new { auditId });
    }

    private static async Task<ReviewRow> AddAsync(Desk d, int? finding = null, string? cue = null, string? verdict = null,
        string decision = "spurious", string reason = "")
    {
        var added = await d.Store.AddAsync(d.Seed.Team.Id, d.Audit.Id, new NewReview(d.Key.Id, finding, cue, verdict, decision, reason), None);
        Assert.Equal(ReviewRefusal.None, added.Refusal);
        return added.Review!;
    }

    [PgFact]
    public async Task Add_SignedReview_StoresTheKeyAndShowsItsNameAndPrefix()
    {
        await using var db = await TestDatabase.CreateAsync();
        var d = await DeskAsync(db);

        var row = await AddAsync(d, cue: "stamp=yes", decision: "acceptable", reason: "the stamp is the grade mark");

        Assert.Equal(new ReviewSigner(d.Key.Id, "rita", d.Key.Prefix), row.Signer);
        Assert.Equal(($"rita ({d.Key.Prefix})", "cue", "stamp=yes", null), (row.Reviewer, row.Subject, row.Cue, row.LegacyReviewer));
        await using var conn = await db.DataSource.OpenConnectionAsync();
        Assert.Equal(d.Key.Id, await conn.ExecuteScalarAsync<Guid>("SELECT key_id FROM reviews WHERE id = @Id", new { row.Id }));
        Assert.Null(await conn.ExecuteScalarAsync<string?>("SELECT reviewer FROM reviews WHERE id = @Id", new { row.Id }));
    }

    [PgFact]
    public async Task Reviews_UpdateDeleteOrTruncate_AreRefusedByTheDatabase()
    {
        await using var db = await TestDatabase.CreateAsync();
        var d = await DeskAsync(db);
        var row = await AddAsync(d, finding: 0);
        await using var conn = await db.DataSource.OpenConnectionAsync();

        foreach (var sql in new[]
                 {
                     "UPDATE reviews SET decision = 'needs-data' WHERE id = @Id",
                     "UPDATE reviews SET key_id = NULL, reviewer = 'someone else' WHERE id = @Id",
                     "DELETE FROM reviews WHERE id = @Id",
                     "TRUNCATE reviews",
                 })
        {
            var e = await Assert.ThrowsAsync<PostgresException>(() => conn.ExecuteAsync(sql, new { row.Id }));
            Assert.Contains("append-only", e.MessageText, StringComparison.Ordinal);
        }
        // The audit's reviews are not erased by deleting the audit either.
        var fk = await Assert.ThrowsAsync<PostgresException>(() => conn.ExecuteAsync("DELETE FROM audits WHERE id = @Id", new { d.Audit.Id }));
        Assert.Equal(PostgresErrorCodes.ForeignKeyViolation, fk.SqlState);
        var kept = (await d.Store.ListAsync(d.Seed.Team.Id, d.Audit.Id, None))!;
        Assert.Equal(("spurious", d.Key.Id), (kept.Single().Decision, kept.Single().Signer!.KeyId));
    }

    [PgFact]
    public async Task Insert_UnsignedRow_IsRefusedByTheDatabase()
    {
        await using var db = await TestDatabase.CreateAsync();
        var d = await DeskAsync(db);
        await using var conn = await db.DataSource.OpenConnectionAsync();

        var e = await Assert.ThrowsAsync<PostgresException>(() => conn.ExecuteAsync(
            "INSERT INTO reviews (id, audit_id, finding, reviewer, decision) VALUES (gen_random_uuid(), @Id, 0, 'anyone', 'confirmed')",
            new { d.Audit.Id }));

        Assert.Contains("signed", e.MessageText, StringComparison.Ordinal);
    }

    [PgFact]
    public async Task Add_SameSubjectAgain_SupersedesThePreviousReviewOfThatSubjectOnly()
    {
        await using var db = await TestDatabase.CreateAsync();
        var d = await DeskAsync(db);

        var first = await AddAsync(d, cue: "stamp=yes", decision: "needs-data");
        var onFinding = await AddAsync(d, finding: 0, decision: "spurious");
        var second = await AddAsync(d, cue: "stamp=yes", decision: "spurious");
        var onOtherCue = await AddAsync(d, cue: "belt=blue", decision: "needs-data");
        var third = await AddAsync(d, cue: "stamp=yes", decision: "acceptable", reason: "stamp marks the grade");

        Assert.Equal((null, first.Id, second.Id), (first.Supersedes, second.Supersedes, third.Supersedes));
        Assert.Equal((null, null), (onFinding.Supersedes, onOtherCue.Supersedes));
        var history = (await d.Store.HistoryAsync(d.Seed.Team.Id, d.Audit.Id, None))!;
        var by = history.ToDictionary(e => e.Review.Id, e => e.SupersededBy?.Id);
        Assert.Equal(second.Id, by[first.Id]);
        Assert.Equal(third.Id, by[second.Id]);
        Assert.Null(by[third.Id]);
        Assert.Null(by[onFinding.Id]);
        Assert.Equal([first.Id, onFinding.Id, second.Id, onOtherCue.Id, third.Id], history.Select(e => e.Review.Id));
        Assert.Equal($"rita ({d.Key.Prefix})", history[0].SupersededBy!.Reviewer);
    }

    [PgFact]
    public async Task Add_ConcurrentReviewsOfOneSubject_FormOneChain()
    {
        await using var db = await TestDatabase.CreateAsync();
        var d = await DeskAsync(db);

        await Task.WhenAll(Enumerable.Range(0, 8).Select(_ => Task.Run(() => AddAsync(d, finding: 0))));

        var rows = (await d.Store.ListAsync(d.Seed.Team.Id, d.Audit.Id, None))!;
        Assert.Equal(1, rows.Count(r => r.Supersedes is null));
        Assert.Equal(7, rows.Select(r => r.Supersedes).OfType<Guid>().Distinct().Count());
        Assert.Equal(1, rows.Count(r => r.SupersededBy is null));
    }

    [PgFact]
    public async Task Add_UnknownFindingOrCue_IsRefusedAndNothingStored()
    {
        await using var db = await TestDatabase.CreateAsync();
        var d = await DeskAsync(db);
        var team = d.Seed.Team.Id;

        var finding = await d.Store.AddAsync(team, d.Audit.Id, new NewReview(d.Key.Id, 7, null, null, "spurious", ""), None);
        var cue = await d.Store.AddAsync(team, d.Audit.Id, new NewReview(d.Key.Id, null, "stamp=no-such", null, "spurious", ""), None);
        var column = await d.Store.AddAsync(team, d.Audit.Id, new NewReview(d.Key.Id, null, "belt=grey", null, "needs-data", ""), None);
        var place = await d.Store.AddAsync(team, d.Audit.Id, new NewReview(d.Key.Id, null, "place:top-left=yes", null, "spurious", ""), None);

        Assert.Equal((ReviewRefusal.UnknownFinding, ReviewRefusal.UnknownCue), (finding.Refusal, cue.Refusal));
        Assert.Equal((ReviewRefusal.None, ReviewRefusal.None), (column.Refusal, place.Refusal)); // an image-set value; an inferred place cue
        Assert.Equal(2, (await d.Store.ListAsync(team, d.Audit.Id, None))!.Count);
    }

    [PgFact]
    public async Task Add_AuditOrKeyOfAnotherTeam_IsRefused()
    {
        await using var db = await TestDatabase.CreateAsync();
        var mine = await DeskAsync(db, "team-a");
        var theirs = await DeskAsync(db, "team-b");

        var audit = await mine.Store.AddAsync(mine.Seed.Team.Id, theirs.Audit.Id, new NewReview(mine.Key.Id, 0, null, null, "spurious", ""), None);
        var key = await mine.Store.AddAsync(mine.Seed.Team.Id, mine.Audit.Id, new NewReview(theirs.Key.Id, 0, null, null, "spurious", ""), None);

        Assert.Equal((ReviewRefusal.AuditNotFound, ReviewRefusal.KeyNotOfTeam), (audit.Refusal, key.Refusal));
        Assert.Null(await mine.Store.ListAsync(mine.Seed.Team.Id, theirs.Audit.Id, None));
        Assert.Null(await mine.Store.EffectiveVerdictAsync(mine.Seed.Team.Id, theirs.Audit.Id, None));
        Assert.Empty((await theirs.Store.ListAsync(theirs.Seed.Team.Id, theirs.Audit.Id, None))!);
    }

    [PgFact]
    public async Task Override_ChangesTheEffectiveVerdictAndTheLatestOneStands()
    {
        await using var db = await TestDatabase.CreateAsync();
        var d = await DeskAsync(db, engineVerdict: "block");
        var team = d.Seed.Team.Id;

        var same = await d.Store.AddAsync(team, d.Audit.Id, new NewReview(d.Key.Id, null, null, "block", "override", "keep it"), None);
        var before = await d.Store.EffectiveVerdictAsync(team, d.Audit.Id, None);
        var first = await AddAsync(d, verdict: "pass", decision: "override", reason: "stamp removed at the line since");
        var second = await AddAsync(d, verdict: "pass", decision: "override", reason: "re-checked on the new belt");
        var after = await d.Store.EffectiveVerdictAsync(team, d.Audit.Id, None);

        Assert.Equal((ReviewRefusal.VerdictUnchanged, "block"), (same.Refusal, same.EngineVerdict));
        Assert.Equal(("block", "block", null), (before!.EngineVerdict, before.Verdict, before.Override));
        Assert.Equal(("block", "pass", second.Id), (after!.EngineVerdict, after.Verdict, after.Override!.Id));
        Assert.Equal(("verdict", first.Id), (second.Subject, second.Supersedes));
        Assert.Equal("re-checked on the new belt", after.Override.Note);
    }

    [PgFact]
    public async Task Override_AuditNotDone_IsRefused()
    {
        await using var db = await TestDatabase.CreateAsync();
        var seed = await Seed.CreateAsync(db, "team-a");
        var audit = await seed.AuditAsync(db, 10);
        var (_, key) = await new ApiKeyStore(db.DataSource).CreateAsync(seed.Team.Id, "rita", None);
        var store = new ReviewStore(db.DataSource);

        var added = await store.AddAsync(seed.Team.Id, audit.Id, new NewReview(key.Id, null, null, "pass", "override", "why not"), None);

        Assert.Equal((ReviewRefusal.AuditNotDone, "queued"), (added.Refusal, added.State));
        Assert.Equal(("queued", null, null), ((await store.EffectiveVerdictAsync(seed.Team.Id, audit.Id, None))!.State,
            (await store.EffectiveVerdictAsync(seed.Team.Id, audit.Id, None))!.Verdict, (await store.EffectiveVerdictAsync(seed.Team.Id, audit.Id, None))!.Override));
    }

    [PgFact]
    public async Task Insert_AcceptableOrOverrideWithoutReason_IsRefusedByTheDatabase()
    {
        await using var db = await TestDatabase.CreateAsync();
        var d = await DeskAsync(db);
        await using var conn = await db.DataSource.OpenConnectionAsync();

        foreach (var (cue, verdict, decision) in new[] { ((string?)"stamp=yes", (string?)null, "acceptable"), (null, "pass", "override") })
        {
            var e = await Assert.ThrowsAsync<PostgresException>(() => conn.ExecuteAsync(
                "INSERT INTO reviews (id, audit_id, cue, verdict, key_id, decision, note) VALUES (gen_random_uuid(), @auditId, @cue, @verdict, @keyId, @decision, '  ')",
                new { auditId = d.Audit.Id, cue, verdict, keyId = d.Key.Id, decision }));
            Assert.Equal(PostgresErrorCodes.CheckViolation, e.SqlState);
        }
    }

    [PgFact]
    public async Task Migration0003_OldRows_StayAsTheyWereAndAreListedAsUnsignedLegacy()
    {
        await using var db = await TestDatabase.CreateAsync(migrate: false);
        var all = Migration.Embedded();
        await new MigrationRunner(db.DataSource, all.Where(m => m.Version <= 2).ToList()).ApplyAsync(None);
        var seed = await Seed.CreateAsync(db, "team-a");
        var audit = await seed.AuditAsync(db, 10);
        await DoneAsync(db, audit.Id, "block");
        var oldId = Guid.NewGuid();
        await using (var conn = await db.DataSource.OpenConnectionAsync())
        {
            await conn.ExecuteAsync(
                """
                INSERT INTO reviews (id, audit_id, finding, reviewer, decision, note) VALUES (@oldId, @auditId, 0, 'rita', 'confirmed', 'stamp in the corner');
                INSERT INTO reviews (id, audit_id, cue, reviewer, decision, note) VALUES (gen_random_uuid(), @auditId, 'stamp=yes', 'sam', 'needs-more-data', '');
                INSERT INTO reviews (id, audit_id, reviewer, decision, note) VALUES (gen_random_uuid(), @auditId, 'sam', 'note', 'looked at it');
                """, new { oldId, auditId = audit.Id });
        }
        const string Snapshot = "SELECT id, audit_id, finding, cue, reviewer, decision, note, created_at FROM reviews ORDER BY id";
        List<string> before;
        await using (var conn = await db.DataSource.OpenConnectionAsync())
            before = (await conn.QueryAsync(Snapshot)).Select(r => (string)r.ToString()).ToList();

        await new MigrationRunner(db.DataSource, all).ApplyAsync(None);
        NpgsqlConnection.ClearAllPools(); // the new columns and types are read afresh
        var (_, key) = await new ApiKeyStore(db.DataSource).CreateAsync(seed.Team.Id, "rita", None);
        var store = new ReviewStore(db.DataSource);
        var signed = (await store.AddAsync(seed.Team.Id, audit.Id, new NewReview(key.Id, 0, null, null, "spurious", ""), None)).Review!;

        await using (var conn = await db.DataSource.OpenConnectionAsync())
            Assert.Equal(before, (await conn.QueryAsync(Snapshot.Replace("ORDER BY", "WHERE key_id IS NULL ORDER BY", StringComparison.Ordinal)))
                .Select(r => (string)r.ToString()).ToList());
        var history = (await store.HistoryAsync(seed.Team.Id, audit.Id, None))!;
        var old = history.Single(e => e.Review.Id == oldId);
        Assert.Equal((false, "rita", null, "confirmed", "finding"), (old.Review.Signed, old.Review.Reviewer, old.Review.Signer, old.Review.Decision, old.Review.Subject));
        Assert.Equal(signed.Id, old.SupersededBy!.Id);
        Assert.Equal(oldId, signed.Supersedes);
        Assert.Equal(["audit", "cue", "finding", "finding"], history.Select(e => e.Review.Subject).Order(StringComparer.Ordinal));
        Assert.Equal(signed.Id, history[^1].Review.Id);
        Assert.Equal(3, history.Count(e => !e.Review.Signed));
    }
}
