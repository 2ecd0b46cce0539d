using AuditSvc.Data.Artifacts;
using Microsoft.Extensions.Hosting;
using Microsoft.Extensions.Logging;
using Npgsql;

namespace AuditSvc.Api.Artifacts;

/// <summary>
/// Removes stored files that no row names: what a process killed between moving an upload into place and writing its
/// row left behind (a blob under blobs/sha256/, an unpacked set under sets/, a model folder under models/). Each is
/// judged under its content's lock (<see cref="ContentLocks"/>), so a file an upload is registering at that moment is
/// never taken; one whose lock is held is left for the next sweep. Only entries older than the grace age are looked
/// at, for processes of an older version that do not take the lock.
/// </summary>
public sealed class StoredOrphans(ArtifactStore artifacts, ContentLocks locks)
{
    public static readonly TimeSpan Grace = TimeSpan.FromHours(1);

    /// <summary>Removes every orphan older than <paramref name="grace"/>; returns how many entries went.</summary>
    public async Task<int> SweepAsync(TimeSpan grace, CancellationToken ct)
    {
        int removed = 0;
        var cutoff = DateTime.UtcNow - grace;
        foreach (var (path, isFolder, hashPrefix, relative) in Candidates())
        {
            ct.ThrowIfCancellationRequested();
            var written = isFolder ? Directory.GetLastWriteTimeUtc(path) : File.GetLastWriteTimeUtc(path);
            if (written > cutoff) continue;
            await using var hold = await locks.TryHoldAsync(hashPrefix, ct);
            if (hold is null) continue;
            // Under the lock: no upload of this content is between "stored?" and its row, so "no row" means orphan.
            bool registered = isFolder
                ? await locks.IsPathRegisteredAsync(relative, ct)
                : await locks.IsRegisteredAsync("sha256:" + hashPrefix, ct);
            if (registered) continue;
            try
            {
                if (isFolder) Directory.Delete(path, recursive: true);
                else File.Delete(path);
                removed++;
            }
            catch (Exception e) when (e is IOException or UnauthorizedAccessException)
            {
                // Gone already, or not ours to remove: the next sweep looks again.
            }
        }
        return removed;
    }

    // Blobs (blobs/sha256/ab/<64 hex>.ext), unpacked sets (sets/<64 hex>) and model folders (models/<16 hex>-<recipe>):
    // each with the hash (or its first 16 digits, enough for the lock's key) and its '/'-separated path under the root.
    private IEnumerable<(string Path, bool IsFolder, string HashPrefix, string Relative)> Candidates()
    {
        var blobs = Path.Combine(artifacts.Root, ArtifactStore.BlobFolder);
        if (Directory.Exists(blobs))
            foreach (var dir in Directory.EnumerateDirectories(blobs))
                foreach (var file in Directory.EnumerateFiles(dir))
                {
                    var name = Path.GetFileName(file);
                    int dot = name.IndexOf('.', StringComparison.Ordinal);
                    var hash = dot < 0 ? name : name[..dot];
                    if (IsHex(hash, 64)) yield return (file, false, hash, $"{ArtifactStore.BlobFolder}/{Path.GetFileName(dir)}/{name}");
                }
        var sets = Path.Combine(artifacts.Root, ArtifactStore.SetFolder);
        if (Directory.Exists(sets))
            foreach (var dir in Directory.EnumerateDirectories(sets))
            {
                var name = Path.GetFileName(dir);
                if (IsHex(name, 64)) yield return (dir, true, name, $"{ArtifactStore.SetFolder}/{name}");
            }
        var models = Path.Combine(artifacts.Root, ArtifactStore.ModelFolder);
        if (Directory.Exists(models))
            foreach (var dir in Directory.EnumerateDirectories(models))
            {
                var name = Path.GetFileName(dir);
                const int digits = ArtifactStore.ModelHashDigits;
                if (name.Length > digits + 1 && name[digits] == '-' && IsHex(name[..digits], digits))
                    yield return (dir, true, name[..digits], $"{ArtifactStore.ModelFolder}/{name}");
            }
    }

    private static bool IsHex(string s, int length) => s.Length == length && s.All(char.IsAsciiHexDigitLower);
}

/// <summary>Runs <see cref="StoredOrphans"/> once the host has started and then every hour; a database that does not answer only delays it.</summary>
internal sealed partial class OrphanSweeper(StoredOrphans orphans, ILogger<OrphanSweeper> log) : BackgroundService
{
    private static readonly TimeSpan Every = TimeSpan.FromHours(1);

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        using var timer = new PeriodicTimer(Every);
        try
        {
            do
            {
                try
                {
                    var removed = await orphans.SweepAsync(StoredOrphans.Grace, stoppingToken);
                    if (removed > 0) Swept(log, removed);
                }
                catch (Exception e) when (e is NpgsqlException or IOException or UnauthorizedAccessException or TimeoutException)
                {
                    SweepFailed(log, e.Message);
                }
            }
            while (await timer.WaitForNextTickAsync(stoppingToken));
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
        }
    }

    [LoggerMessage(EventId = 5003, Level = LogLevel.Information, Message = "removed {Count} stored files or folders that no model or image set names (uploads cut off before their row was written)")]
    private static partial void Swept(ILogger logger, int count);

    [LoggerMessage(EventId = 5004, Level = LogLevel.Warning, Message = "the sweep of unregistered stored files could not finish: {Reason}")]
    private static partial void SweepFailed(ILogger logger, string reason);
}
