using AuditSvc.Core;
using AuditSvc.Data.Migrations;
using Dapper;
using Npgsql;

namespace AuditSvc.Data.Tests.Migrations;

public sealed class MigrationRunnerTests
{
    [PgFact]
    public async Task Apply_EmptyDatabase_AppliesEveryScriptAndRecordsIt()
    {
        await using var db = await TestDatabase.CreateAsync(migrate: false);
        var runner = new MigrationRunner(db.DataSource);

        var applied = await runner.ApplyAsync(CancellationToken.None);

        var expected = Migration.Embedded().Select(m => m.Version).ToList();
        Assert.NotEmpty(expected);
        Assert.Equal(expected, applied);
        Assert.Equal(expected, await runner.AppliedAsync(CancellationToken.None));
        await using var conn = await db.DataSource.OpenConnectionAsync();
        foreach (var table in new[] { "teams", "api_keys", "models", "image_sets", "items", "audits", "audit_chunks", "findings", "attribute_scores", "reviews" })
            Assert.True(await conn.ExecuteScalarAsync<bool>("SELECT to_regclass(@table) IS NOT NULL", new { table }), table);
    }

    [PgFact]
    public async Task Apply_UpToDateDatabase_IsNoOp()
    {
        await using var db = await TestDatabase.CreateAsync(migrate: false);
        var runner = new MigrationRunner(db.DataSource);
        await runner.ApplyAsync(CancellationToken.None);
        await using var conn = await db.DataSource.OpenConnectionAsync();
        var before = await conn.QueryAsync<(int, DateTime)>("SELECT version, applied_at FROM schema_version ORDER BY version");

        var second = await runner.ApplyAsync(CancellationToken.None);

        Assert.Empty(second);
        var after = await conn.QueryAsync<(int, DateTime)>("SELECT version, applied_at FROM schema_version ORDER BY version");
        Assert.Equal(before, after);
    }

    [PgFact]
    public async Task Apply_NewScriptAfterEarlierRun_AppliesOnlyTheNewOne()
    {
        await using var db = await TestDatabase.CreateAsync(migrate: false);
        var first = new MigrationRunner(db.DataSource);
        await first.ApplyAsync(CancellationToken.None);
        var extra = Migration.Parse("9001_add_probe.sql", "CREATE TABLE probe (id integer PRIMARY KEY);");
        var second = new MigrationRunner(db.DataSource, [.. Migration.Embedded(), extra]);

        var applied = await second.ApplyAsync(CancellationToken.None);

        Assert.Equal([9001], applied);
    }

    [PgFact]
    public async Task Apply_FailingScript_LeavesNothingApplied()
    {
        await using var db = await TestDatabase.CreateAsync(migrate: false);
        var broken = Migration.Parse("9002_broken.sql", "CREATE TABLE nope (;");
        var runner = new MigrationRunner(db.DataSource, [.. Migration.Embedded(), broken]);

        await Assert.ThrowsAsync<PostgresException>(() => runner.ApplyAsync(CancellationToken.None));

        Assert.Empty(await runner.AppliedAsync(CancellationToken.None));
    }

    [PgFact]
    public async Task Apply_TwoRunnersAtOnce_AppliesEachScriptOnce()
    {
        await using var db = await TestDatabase.CreateAsync(migrate: false);
        // Hold the runners' lock so both are provably waiting on it together before either can start.
        await using var holder = await db.DataSource.OpenConnectionAsync();
        await using var tx = await holder.BeginTransactionAsync();
        await holder.ExecuteAsync("SELECT pg_advisory_xact_lock(@key)", new { key = MigrationRunner.LockKey }, tx);

        var a = new MigrationRunner(db.DataSource).ApplyAsync(CancellationToken.None);
        var b = new MigrationRunner(db.DataSource).ApplyAsync(CancellationToken.None);
        await using (var probe = await db.DataSource.OpenConnectionAsync())
        {
            while (await probe.ExecuteScalarAsync<int>(
                       "SELECT count(*) FROM pg_locks WHERE locktype = 'advisory' AND NOT granted AND database = (SELECT oid FROM pg_database WHERE datname = current_database())") < 2)
                await Task.Delay(20);
        }
        await tx.CommitAsync();
        var results = await Task.WhenAll(a, b);

        var all = Migration.Embedded().Select(m => m.Version).ToList();
        Assert.Single(results, r => r.SequenceEqual(all));
        Assert.Single(results, r => r.Count == 0);
        await using var conn = await db.DataSource.OpenConnectionAsync();
        Assert.Equal(all.Count, await conn.ExecuteScalarAsync<int>("SELECT count(*) FROM schema_version"));
    }

    [Theory]
    [InlineData("1_initial.sql")]
    [InlineData("0000_zero.sql")]
    [InlineData("abcd_letters.sql")]
    [InlineData("00012_five_digits.sql")]
    public void Parse_BadFileName_ThrowsNamingTheFile(string file)
    {
        var e = Assert.Throws<AuditInputException>(() => Migration.Parse(file, ""));
        Assert.Contains(file, e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Embedded_ScriptsFromRepository_AreNumberedFromOne()
    {
        var list = Migration.Embedded();
        Assert.Equal(1, list[0].Version);
        Assert.Equal("0001_initial_schema", list[0].Name);
    }
}
