using AuditSvc.Data.Teams;
using Dapper;

namespace AuditSvc.Data.Tests.Teams;

public sealed class ApiKeyStoreTests
{
    [PgFact]
    public async Task Verify_KeyJustCreated_ReturnsItsTeam()
    {
        await using var db = await TestDatabase.CreateAsync();
        var team = await new TeamStore(db.DataSource).EnsureAsync("vision-qa", CancellationToken.None);
        var keys = new ApiKeyStore(db.DataSource);
        var (key, info) = await keys.CreateAsync(team.Id, "ci", CancellationToken.None);

        var caller = await keys.VerifyAsync(key, CancellationToken.None);

        Assert.Equal(new Caller(team.Id, "vision-qa", info.Id), caller);
    }

    [PgFact]
    public async Task Create_Always_StoresOnlyTheHash()
    {
        await using var db = await TestDatabase.CreateAsync();
        var team = await new TeamStore(db.DataSource).EnsureAsync("vision-qa", CancellationToken.None);
        var (key, info) = await new ApiKeyStore(db.DataSource).CreateAsync(team.Id, "ci", CancellationToken.None);

        await using var conn = await db.DataSource.OpenConnectionAsync();
        var row = await conn.QuerySingleAsync<(string Prefix, byte[] Hash)>("SELECT prefix, hash FROM api_keys WHERE id = @Id", new { info.Id });
        Assert.Equal(ApiKeySecret.Hash(key), row.Hash);
        var secret = key.Split('_', 3)[2];
        var everything = await conn.QuerySingleAsync<string>("SELECT row_to_json(k)::text FROM api_keys k WHERE id = @Id", new { info.Id });
        Assert.DoesNotContain(secret, everything, StringComparison.Ordinal);
    }

    [PgFact]
    public async Task Verify_SecretChangedInLastCharacter_ReturnsNull()
    {
        await using var db = await TestDatabase.CreateAsync();
        var team = await new TeamStore(db.DataSource).EnsureAsync("vision-qa", CancellationToken.None);
        var keys = new ApiKeyStore(db.DataSource);
        var (key, _) = await keys.CreateAsync(team.Id, "ci", CancellationToken.None);
        var wrong = key[..^1] + (key[^1] == 'A' ? 'B' : 'A');

        Assert.Null(await keys.VerifyAsync(wrong, CancellationToken.None));
        Assert.Null(await keys.VerifyAsync(key + "x", CancellationToken.None));
        Assert.Null(await keys.VerifyAsync("not-a-key", CancellationToken.None));
    }

    [PgFact]
    public async Task Verify_RevokedKey_ReturnsNull()
    {
        await using var db = await TestDatabase.CreateAsync();
        var team = await new TeamStore(db.DataSource).EnsureAsync("vision-qa", CancellationToken.None);
        var keys = new ApiKeyStore(db.DataSource);
        var (key, info) = await keys.CreateAsync(team.Id, "ci", CancellationToken.None);

        Assert.True(await keys.RevokeAsync(info.Prefix, CancellationToken.None));

        Assert.Null(await keys.VerifyAsync(key, CancellationToken.None));
        Assert.False(await keys.RevokeAsync(info.Prefix, CancellationToken.None));
        Assert.NotNull((await keys.ListAsync(CancellationToken.None)).Single().RevokedAt);
    }

    [Fact]
    public void Matches_SameLengthDifferentHash_IsFalse()
    {
        var (key, _) = ApiKeySecret.New();
        var (other, _) = ApiKeySecret.New();

        Assert.True(ApiKeySecret.Matches(key, ApiKeySecret.Hash(key)));
        Assert.False(ApiKeySecret.Matches(other, ApiKeySecret.Hash(key)));
        // A stored hash of another length (corrupt row) is a mismatch, not an exception.
        Assert.False(ApiKeySecret.Matches(key, ApiKeySecret.Hash(key)[..16]));
    }

    [Fact]
    public void PrefixOf_WellFormedKey_IsTheTwelveHexCharacters()
    {
        var (key, prefix) = ApiKeySecret.New();

        Assert.Equal(prefix, ApiKeySecret.PrefixOf(key));
        Assert.Equal(12, prefix.Length);
        Assert.Null(ApiKeySecret.PrefixOf("Bearer " + key));
    }
}
