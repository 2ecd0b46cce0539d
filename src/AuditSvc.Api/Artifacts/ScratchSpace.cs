using AuditSvc.Api.Hosting;
using Microsoft.Extensions.Hosting;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Artifacts;

/// <summary>
/// Where this process keeps what is not finished yet: an upload being received, an archive being unpacked, a model
/// folder or a report being put together. Each process writes under scratch/uploads/&lt;instance&gt;/ and holds an
/// exclusive lock on scratch-owners/&lt;instance&gt;.lock for as long as it lives; the lock goes with the process however
/// it ends (a kill included), so a folder whose lock can be taken belongs to a process that is gone, and is removed by
/// <see cref="Sweep"/>. Both are made on first use, so a process that never writes leaves no trace. Finished artifacts are moved out of here (a rename on the same file system), so nothing half
/// written is ever seen under blobs/, sets/, models/ or reports/.
/// </summary>
public sealed class ScratchSpace : IDisposable
{
    /// <summary>Under the artifact root.</summary>
    public const string Folder = "scratch/uploads";

    /// <summary>Under the artifact root: one lock file per live process that has used its scratch folder.</summary>
    public const string OwnersFolder = "scratch-owners";

    /// <summary>
    /// How old an entry without a lock must be before it is removed: a folder being made has no .owner for an
    /// instant, and older versions wrote loose scratch/&lt;guid&gt; entries with no owner at all.
    /// </summary>
    public static readonly TimeSpan UnownedAge = TimeSpan.FromHours(1);

    private readonly string _dataRoot;
    private readonly Lock _gate = new();
    private string? _mine;
    private FileStream? _owner;
    private bool _closed;
    private bool? _locksWork;

    public ScratchSpace(IOptions<ServiceOptions> options) : this(options.Value.DataRoot) { }

    internal ScratchSpace(string dataRoot)
    {
        _dataRoot = Path.GetFullPath(dataRoot);
        Root = Path.Combine(_dataRoot, "scratch", "uploads");
        Owners = Path.Combine(_dataRoot, OwnersFolder);
    }

    /// <summary>scratch/uploads under the artifact root: one folder per live process.</summary>
    public string Root { get; }

    /// <summary>scratch-owners under the artifact root: the lock files.</summary>
    public string Owners { get; }

    /// <summary>A fresh path (nothing there yet) in this process's own folder, made and locked on first use.</summary>
    public string NewPath()
    {
        lock (_gate)
        {
            ObjectDisposedException.ThrowIf(_closed, this);
            if (_mine is null)
            {
                var name = $"{Environment.ProcessId}-{Guid.NewGuid():N}";
                // The lock first: a sweeper never sees this folder without its owner.
                Directory.CreateDirectory(Owners);
                _owner = new FileStream(LockOf(name), FileMode.CreateNew, FileAccess.ReadWrite, FileShare.None);
                var mine = Path.Combine(Root, name);
                Directory.CreateDirectory(mine);
                _mine = mine;
            }
            return Path.Combine(_mine, Guid.NewGuid().ToString("N"));
        }
    }

    /// <summary>
    /// Removes what processes that are gone left: every other instance folder whose lock can be taken, and unowned
    /// entries older than <see cref="UnownedAge"/>. Folders of live processes (here or on another machine sharing
    /// the root) are never touched. Returns how many entries went.
    /// </summary>
    public int Sweep()
    {
        int removed = 0;
        if (Directory.Exists(Root))
        {
            foreach (var dir in Directory.EnumerateDirectories(Root))
            {
                if (string.Equals(dir, _mine, StringComparison.Ordinal)) continue;
                // Where locks are not enforced (DOTNET_SYSTEM_IO_DISABLEFILELOCKING, a file system without them), a
                // live owner cannot be told from a dead one: keep every folder rather than remove a live upload.
                if (!LocksWork() || !OwnerGone(LockOf(Path.GetFileName(dir)), dir)) continue;
                if (TryDelete(dir)) removed++;
            }
            foreach (var file in Directory.EnumerateFiles(Root))
                if (Old(File.GetLastWriteTimeUtc(file)) && TryDelete(file)) removed++;
        }
        if (Directory.Exists(Owners))
        {
            // Locks of processes that are gone, once their folder is: the lock is taken last by the sweep.
            foreach (var lockFile in Directory.EnumerateFiles(Owners, "*.lock"))
            {
                var dir = Path.Combine(Root, Path.GetFileNameWithoutExtension(lockFile));
                if (!Directory.Exists(dir) && LocksWork() && OwnerGone(lockFile, null)) TryDelete(lockFile);
            }
        }
        // Older versions kept partial uploads as scratch/<32 hex digits>, files or folders, with no owner.
        var legacy = Path.Combine(_dataRoot, "scratch");
        if (Directory.Exists(legacy))
        {
            foreach (var entry in Directory.EnumerateFileSystemEntries(legacy))
            {
                var name = Path.GetFileName(entry);
                if (name.Length == 32 && name.All(char.IsAsciiHexDigitLower) && Old(Directory.GetLastWriteTimeUtc(entry)) && TryDelete(entry))
                    removed++;
            }
        }
        return removed;
    }

    private static bool Old(DateTime lastWriteUtc) => lastWriteUtc < DateTime.UtcNow - UnownedAge;

    /// <summary>Whether an exclusive lock held by one handle keeps a second one out here (checked once, on a probe file).</summary>
    internal bool LocksWork()
    {
        if (_locksWork is { } known) return known;
        Directory.CreateDirectory(Root);
        var probe = Path.Combine(Root, $"probe-{Guid.NewGuid():N}");
        try
        {
            using var first = new FileStream(probe, FileMode.CreateNew, FileAccess.ReadWrite, FileShare.None);
            try
            {
                using var second = new FileStream(probe, FileMode.Open, FileAccess.ReadWrite, FileShare.None);
                _locksWork = false;
            }
            catch (IOException)
            {
                _locksWork = true;
            }
        }
        finally
        {
            TryDelete(probe);
        }
        return _locksWork.Value;
    }

    private string LockOf(string instance) => Path.Combine(Owners, instance + ".lock");

    private static bool OwnerGone(string lockFile, string? dir)
    {
        if (!File.Exists(lockFile)) return dir is null || Old(Directory.GetLastWriteTimeUtc(dir)); // not made by this layout
        try
        {
            // The lock is released by the kernel when its process ends, however it ends.
            using var probe = new FileStream(lockFile, FileMode.Open, FileAccess.ReadWrite, FileShare.None);
            return true;
        }
        catch (IOException)
        {
            return false; // held: its process is alive
        }
        catch (UnauthorizedAccessException)
        {
            return false;
        }
    }

    private static bool TryDelete(string path)
    {
        try
        {
            if (Directory.Exists(path)) Directory.Delete(path, recursive: true);
            else File.Delete(path);
            return true;
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            return false; // another sweeper got there first, or it is not ours to remove; the next sweep retries
        }
    }

    /// <summary>Removes this process's own folder and releases its lock (the host stops; requests have drained).</summary>
    public void Dispose()
    {
        lock (_gate)
        {
            if (_closed) return;
            _closed = true;
            if (_mine is not null) TryDelete(_mine);
            _owner?.Dispose();
            if (_owner is not null) TryDelete(_owner.Name);
        }
    }
}

/// <summary>Sweeps scratch/uploads when the host starts (before it serves anything) and then every 10 minutes.</summary>
internal sealed partial class ScratchSweeper(ScratchSpace scratch, ILogger<ScratchSweeper> log) : BackgroundService
{
    private static readonly TimeSpan Every = TimeSpan.FromMinutes(10);

    public override Task StartAsync(CancellationToken cancellationToken)
    {
        Run();
        return base.StartAsync(cancellationToken);
    }

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        using var timer = new PeriodicTimer(Every);
        try
        {
            while (await timer.WaitForNextTickAsync(stoppingToken)) Run();
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
        }
    }

    public override async Task StopAsync(CancellationToken cancellationToken)
    {
        await base.StopAsync(cancellationToken);
        scratch.Dispose();
    }

    private void Run()
    {
        try
        {
            var removed = scratch.Sweep();
            if (removed > 0) Swept(log, removed);
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            // A sweep that cannot read the root (unmounted, permissions) must not stop the host; the next one retries.
            SweepFailed(log, e.Message);
        }
    }

    [LoggerMessage(EventId = 5001, Level = LogLevel.Information, Message = "removed {Count} partial files or folders left in scratch by processes that ended")]
    private static partial void Swept(ILogger logger, int count);

    [LoggerMessage(EventId = 5002, Level = LogLevel.Warning, Message = "the scratch sweep could not finish: {Reason}")]
    private static partial void SweepFailed(ILogger logger, string reason);
}
