using AuditSvc.Api.Hosting;
using Hangfire;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Jobs;

/// <summary>
/// How many chunks a team may have queued or running at once: AUDITSVC_TEAM_CHUNKS when set, else the job workers
/// that serve the audit queue across every live server (read from Hangfire's server list, at most every few seconds),
/// and never below 2, so a worker that finishes a chunk finds the team's next one already queued.
/// </summary>
public sealed class DispatchWindow(JobStorage storage, IOptions<ServiceOptions> options)
{
    private static readonly TimeSpan Refresh = TimeSpan.FromSeconds(10);
    private readonly Lock _gate = new();
    private int _workers;
    private DateTime _readAt = DateTime.MinValue;

    public int PerTeam()
    {
        if (options.Value.TeamChunks > 0) return options.Value.TeamChunks;
        lock (_gate)
        {
            if (DateTime.UtcNow - _readAt > Refresh)
            {
                try
                {
                    _workers = storage.GetMonitoringApi().Servers()
                        .Where(s => s.Queues.Contains(AuditJobs.Queue, StringComparer.Ordinal)).Sum(s => s.WorkersCount);
                    _readAt = DateTime.UtcNow;
                }
                catch (Exception e) when (e is Npgsql.NpgsqlException or TimeoutException or InvalidOperationException)
                {
                    // The database is away: keep the last count; dispatching will find out on its own.
                }
            }
            return Math.Max(2, _workers);
        }
    }
}
