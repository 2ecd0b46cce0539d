using AuditSvc.Api.Engine;
using AuditSvc.Api.Hosting;
using AuditSvc.Core;
using AuditSvc.Data.Audits;
using Hangfire;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Jobs;

/// <summary>
/// The audit's jobs. Each takes ids, checks the state in Postgres first and writes only under a claim, so a
/// repeat (Hangfire retry, redelivery after a worker died, or the reconciler) changes nothing twice.
/// </summary>
public sealed partial class AuditJobs(ChunkStore chunks, AuditInputsLoader loader, IAuditEngine engine,
    IBackgroundJobClient queue, DispatchWindow window, IOptions<ServiceOptions> options, ILogger<AuditJobs> log)
{
    public const string Queue = "audits";
    public const int MaxAttempts = 5;

    /// <summary>queued → running, then its team's share of chunk jobs (<see cref="DispatchAsync"/>).</summary>
    [Queue(Queue)]
    [AutomaticRetry(Attempts = 3)]
    public async Task StartAsync(Guid auditId, CancellationToken ct)
    {
        var audit = await chunks.StartAsync(auditId, ct);
        if (audit is null || audit.State != "running") return;
        LogStarted(auditId, audit.ChunksTotal);
        await DispatchAsync(ct);
    }

    /// <summary>
    /// Runs one chunk under a lease it keeps sliding; the completion that closes the last chunk enqueues the merge.
    /// However the job ends (done, refused, lease lost, audit cancelled or failed) a window place may have come free:
    /// it then hands the next chunks to the queue.
    /// </summary>
    [Queue(Queue)]
    [AutomaticRetry(Attempts = 3)]
    public async Task RunChunkAsync(Guid auditId, int chunkIndex, CancellationToken ct)
    {
        await RunClaimedChunkAsync(auditId, chunkIndex, ct);
        await DispatchAsync(ct);
    }

    /// <summary>Hands waiting chunks to the queue, fairly between teams, up to each team's window.</summary>
    public async Task<int> DispatchAsync(CancellationToken ct)
    {
        var next = await chunks.DispatchAsync(window.PerTeam(), ct);
        foreach (var (auditId, index) in next) EnqueueChunk(queue, auditId, index);
        return next.Count;
    }

    private async Task RunClaimedChunkAsync(Guid auditId, int chunkIndex, CancellationToken ct)
    {
        var lease = options.Value.Lease;
        var claim = await chunks.ClaimAsync(auditId, chunkIndex, lease, ct);
        if (claim is null) return; // done, held by a live worker, or the audit is no longer running
        if (claim.Attempt > MaxAttempts)
        {
            await chunks.FailAsync(auditId, $"chunk {chunkIndex} failed {MaxAttempts} times", ct);
            return;
        }
        using var lost = CancellationTokenSource.CreateLinkedTokenSource(ct);
        var heartbeat = HeartbeatAsync(claim, lease, lost);
        byte[] result;
        try
        {
            var inputs = await loader.LoadAsync(auditId, lost.Token);
            result = await engine.RunChunkAsync(inputs, claim.StartItem, claim.ItemCount, lost.Token);
        }
        catch (AuditInputException e)
        {
            await chunks.FailAsync(auditId, e.Message, CancellationToken.None);
            return;
        }
        catch (OperationCanceledException) when (lost.IsCancellationRequested && !ct.IsCancellationRequested)
        {
            LogLostLease(auditId, chunkIndex);
            return;
        }
        catch
        {
            await chunks.ReleaseAsync(claim, CancellationToken.None); // let Hangfire's retry take it straight away
            throw;
        }
        finally
        {
            await lost.CancelAsync();
            await heartbeat;
        }
        var done = await chunks.CompleteAsync(claim, result, lease, ct);
        LogChunk(auditId, chunkIndex, claim.Attempt, done.Accepted);
        if (done.LastChunk) queue.Enqueue<AuditJobs>(j => j.MergeAsync(auditId, true, CancellationToken.None));
    }

    /// <summary>Merges the chunk results and writes audit.json, verdict, findings and scores, once.</summary>
    [Queue(Queue)]
    [AutomaticRetry(Attempts = 3)]
    public async Task MergeAsync(Guid auditId, bool fromLastChunk, CancellationToken ct)
    {
        // Only the job the last chunk enqueued may take the merge inside the grace the completion set.
        var attempt = await chunks.ClaimMergeAsync(auditId, options.Value.Lease * 10, fromLastChunk, ct);
        if (attempt is null) return;
        if (attempt > MaxAttempts)
        {
            await chunks.FailAsync(auditId, $"merge and analysis failed {MaxAttempts} times", ct);
            return;
        }
        // A cancelled audit stops its merge and analysis too, not only its chunks: the worker is free for others.
        using var stop = CancellationTokenSource.CreateLinkedTokenSource(ct);
        var watch = WatchCancelAsync(auditId, stop);
        try
        {
            var inputs = await loader.LoadAsync(auditId, stop.Token);
            var outcome = await engine.FinishAsync(inputs, new StoredChunkResults(chunks, auditId), stop.Token);
            if (await chunks.FinishAsync(auditId, outcome, ct)) LogFinished(auditId, outcome.Verdict);
        }
        catch (AuditInputException e)
        {
            await chunks.FailAsync(auditId, e.Message, CancellationToken.None);
        }
        catch (OperationCanceledException) when (stop.IsCancellationRequested && !ct.IsCancellationRequested)
        {
            LogMergeStopped(auditId);
        }
        finally
        {
            await stop.CancelAsync();
            await watch;
        }
    }

    /// <summary>How often a running merge looks whether its audit was cancelled.</summary>
    internal static readonly TimeSpan CancelCheck = TimeSpan.FromSeconds(1);

    private async Task WatchCancelAsync(Guid auditId, CancellationTokenSource work)
    {
        try
        {
            while (!work.IsCancellationRequested)
            {
                await Task.Delay(CancelCheck, work.Token);
                if (await chunks.IsCancelledAsync(auditId, work.Token))
                {
                    await work.CancelAsync();
                    return;
                }
            }
        }
        catch (OperationCanceledException) { /* the merge ended */ }
        catch (Npgsql.NpgsqlException) { /* the database is away: the merge itself will find out */ }
    }

    /// <summary>
    /// Re-enqueues what a dead worker or a lost enqueue left (expired chunk leases, dispatched chunks never taken,
    /// untaken merges, unstarted audits), then fills the teams' windows, which also revives an audit whose chunks
    /// wait with nothing in flight.
    /// </summary>
    public async Task<int> ReconcileAsync(CancellationToken ct)
    {
        var stale = await chunks.StaleAsync(options.Value.Lease, ct);
        foreach (var (auditId, index) in stale.Chunks) EnqueueChunk(queue, auditId, index);
        foreach (var auditId in stale.Merges) queue.Enqueue<AuditJobs>(j => j.MergeAsync(auditId, false, CancellationToken.None));
        foreach (var auditId in stale.Starts) EnqueueStart(queue, auditId);
        return stale.Chunks.Count + stale.Merges.Count + stale.Starts.Count + await DispatchAsync(ct);
    }

    public static string EnqueueStart(IBackgroundJobClient queue, Guid auditId) =>
        queue.Enqueue<AuditJobs>(j => j.StartAsync(auditId, CancellationToken.None));

    private static void EnqueueChunk(IBackgroundJobClient queue, Guid auditId, int index) =>
        queue.Enqueue<AuditJobs>(j => j.RunChunkAsync(auditId, index, CancellationToken.None));

    // Slides the lease while the chunk runs; when the lease is lost (another worker took the chunk after a
    // stall) the work is cancelled, since its result would be refused anyway.
    private async Task HeartbeatAsync(ChunkClaim claim, TimeSpan lease, CancellationTokenSource work)
    {
        try
        {
            while (true)
            {
                await Task.Delay(lease / 3, work.Token);
                if (!await chunks.ExtendAsync(claim, lease, work.Token)) { await work.CancelAsync(); return; }
            }
        }
        catch (OperationCanceledException) { /* the chunk ended */ }
    }

    [LoggerMessage(EventId = 4003, Level = LogLevel.Information, Message = "audit {AuditId} was cancelled: its merge and analysis stopped")]
    private partial void LogMergeStopped(Guid auditId);

    [LoggerMessage(EventId = 4001, Level = LogLevel.Information, Message = "audit {AuditId} started with {Chunks} chunks")]
    private partial void LogStarted(Guid auditId, int chunks);

    [LoggerMessage(EventId = 4002, Level = LogLevel.Information, Message = "audit {AuditId} chunk {Chunk} attempt {Attempt} done, counted: {Accepted}")]
    private partial void LogChunk(Guid auditId, int chunk, int attempt, bool accepted);

    [LoggerMessage(EventId = 4003, Level = LogLevel.Warning, Message = "audit {AuditId} chunk {Chunk}: lease lost, another worker has it")]
    private partial void LogLostLease(Guid auditId, int chunk);

    [LoggerMessage(EventId = 4004, Level = LogLevel.Information, Message = "audit {AuditId} finished: {Verdict}")]
    private partial void LogFinished(Guid auditId, string verdict);
}
