namespace AuditSvc.Data.Audits;

/// <summary>A running audit with chunks still to do: how many are in flight (queued or running) and how many wait.</summary>
public sealed record OpenAudit(Guid TeamId, Guid AuditId, DateTime CreatedAt, int InFlight, int Waiting);

/// <summary>
/// Which waiting chunks to hand to the job queue next. Fair means: each team has at most <c>window</c> chunks queued
/// or running at once, however many audits it has; a team's share goes to its audit with the fewest chunks in flight
/// (then the oldest); and the hand-over alternates between teams, the team with the fewest in flight first. The job
/// queue is first in, first out, so with every completion refilling its own team's window the workers serve the teams
/// that have work in turn: a small audit waits behind at most a window's worth of each other team's chunks, not
/// behind a large audit's every chunk.
/// </summary>
public static class FairShare
{
    /// <summary>One audit id per chunk to dispatch, in the order to enqueue them.</summary>
    public static IReadOnlyList<Guid> Plan(IReadOnlyList<OpenAudit> open, int window)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(window, 1);
        var teams = open.GroupBy(a => a.TeamId)
            .Select(g => new TeamShare(g.Key, g.Select(a => new AuditShare(a.AuditId, a.CreatedAt, a.InFlight, a.Waiting)).ToList()))
            .OrderBy(t => t.InFlight).ThenBy(t => t.Audits.Min(a => a.CreatedAt)).ThenBy(t => t.Id)
            .ToList();
        var plan = new List<Guid>();
        bool any = true;
        while (any)
        {
            any = false;
            foreach (var team in teams)
            {
                if (team.InFlight >= window) continue;
                var next = team.Audits.Where(a => a.Waiting > 0)
                    .OrderBy(a => a.InFlight).ThenBy(a => a.CreatedAt).ThenBy(a => a.Id).FirstOrDefault();
                if (next is null) continue;
                next.InFlight++;
                next.Waiting--;
                plan.Add(next.Id);
                any = true;
            }
        }
        return plan;
    }

    private sealed class TeamShare(Guid id, List<AuditShare> audits)
    {
        public Guid Id { get; } = id;
        public List<AuditShare> Audits { get; } = audits;
        public int InFlight => Audits.Sum(a => a.InFlight);
    }

    private sealed class AuditShare(Guid id, DateTime createdAt, int inFlight, int waiting)
    {
        public Guid Id { get; } = id;
        public DateTime CreatedAt { get; } = createdAt;
        public int InFlight { get; set; } = inFlight;
        public int Waiting { get; set; } = waiting;
    }
}
