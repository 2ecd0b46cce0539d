using Dapper;
using Npgsql;

namespace AuditSvc.Data.Artifacts;

/// <summary>
/// One PostgreSQL advisory lock per stored content (by its SHA-256), shared by every process on the database. An
/// upload holds its content's lock from the "is it stored already?" check until its row is written or what it alone
/// put in place is removed; the orphan sweep takes it before deciding that a stored file has no row. So the sweep never
/// deletes a file an identical upload is registering at that moment, and a refused upload never deletes a file an
/// identical upload has just registered.
/// </summary>
public sealed class ContentLocks(NpgsqlDataSource db)
{
    /// <summary>First key of the two-key lock: "blob" in ASCII, apart from the migration's and the dispatcher's keys.</summary>
    private const int Space = 0x626C6F62;

    /// <summary>
    /// Second key: 32 bits of the hash. Two contents that share them only wait for each other, which is harmless.
    /// </summary>
    public static int KeyOf(string contentHash)
    {
        var hex = contentHash.StartsWith("sha256:", StringComparison.Ordinal) ? contentHash[7..] : contentHash;
        if (hex.Length < 8 || !int.TryParse(hex.AsSpan(0, 8), System.Globalization.NumberStyles.HexNumber, null, out int key))
            throw new ArgumentException($"not a content hash: '{contentHash}'", nameof(contentHash));
        return key;
    }

    /// <summary>Waits for the content's lock; disposing the result releases it.</summary>
    public async Task<IAsyncDisposable> HoldAsync(string contentHash, CancellationToken ct)
    {
        int key = KeyOf(contentHash);
        var conn = await db.OpenConnectionAsync(ct);
        try
        {
            await conn.ExecuteAsync(new CommandDefinition("SELECT pg_advisory_lock(@space, @key)", new { space = Space, key }, cancellationToken: ct));
            return new Held(conn, key);
        }
        catch
        {
            await conn.DisposeAsync();
            throw;
        }
    }

    /// <summary>The content's lock if nobody holds it, else null.</summary>
    public async Task<IAsyncDisposable?> TryHoldAsync(string contentHash, CancellationToken ct)
    {
        int key = KeyOf(contentHash);
        var conn = await db.OpenConnectionAsync(ct);
        try
        {
            if (await conn.ExecuteScalarAsync<bool>(new CommandDefinition("SELECT pg_try_advisory_lock(@space, @key)", new { space = Space, key }, cancellationToken: ct)))
                return new Held(conn, key);
        }
        catch
        {
            await conn.DisposeAsync();
            throw;
        }
        await conn.DisposeAsync();
        return null;
    }

    /// <summary>Whether any model or image set row, of any team, names this content.</summary>
    public async Task<bool> IsRegisteredAsync(string contentHash, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        return await conn.ExecuteScalarAsync<bool>(new CommandDefinition(
            "SELECT EXISTS (SELECT 1 FROM models WHERE content_hash = @h) OR EXISTS (SELECT 1 FROM image_sets WHERE content_hash = @h)",
            new { h = contentHash }, cancellationToken: ct));
    }

    /// <summary>Whether any row's stored path is <paramref name="relative"/> or lies under it ('/'-separated).</summary>
    public async Task<bool> IsPathRegisteredAsync(string relative, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        var under = relative.Replace(@"\", @"\\", StringComparison.Ordinal).Replace("%", @"\%", StringComparison.Ordinal).Replace("_", @"\_", StringComparison.Ordinal) + "/%";
        return await conn.ExecuteScalarAsync<bool>(new CommandDefinition(
            """
            SELECT EXISTS (SELECT 1 FROM models WHERE relative_path = @relative OR relative_path LIKE @under)
                OR EXISTS (SELECT 1 FROM image_sets WHERE relative_path = @relative OR relative_path LIKE @under)
            """, new { relative, under }, cancellationToken: ct));
    }

    private sealed class Held(NpgsqlConnection conn, int key) : IAsyncDisposable
    {
        public async ValueTask DisposeAsync()
        {
            try
            {
                await conn.ExecuteAsync("SELECT pg_advisory_unlock(@space, @key)", new { space = Space, key });
            }
            catch (Exception e) when (e is NpgsqlException or InvalidOperationException)
            {
                // The session is gone (database restarted): its locks went with it.
            }
            finally
            {
                await conn.DisposeAsync();
            }
        }
    }
}
