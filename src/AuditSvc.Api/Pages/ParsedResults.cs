using AuditSvc.Core.Audits;
using AuditSvc.Data.Audits;
using Microsoft.Extensions.Caching.Memory;

namespace AuditSvc.Api.Pages;

/// <summary>
/// Finished audits' results, parsed once and kept for the audit page and every unit page: a finished audit's
/// audit.json never changes, so a view needs neither the ~1 MB document from PostgreSQL nor a parse of it again.
/// Bounded by the size of the documents kept (<see cref="DefaultBudget"/> characters of audit.json); past it the
/// least recently used go first. Keyed by team and audit, so a team can only ever be served its own results.
/// </summary>
public sealed class ParsedResults : IDisposable
{
    /// <summary>64 Mi characters of audit.json: about 60 audits of 1 MB.</summary>
    public const long DefaultBudget = 64L << 20;

    private readonly MemoryCache _cache;
    private long _parses;

    public ParsedResults() : this(DefaultBudget) { }

    internal ParsedResults(long budget) =>
        _cache = new MemoryCache(new MemoryCacheOptions { SizeLimit = budget, CompactionPercentage = 0.25 });

    /// <summary>A finished result as the pages read it.</summary>
    /// <param name="Result">The engine's audit.json parsed; null when the stored document is not one (the verdict alone is shown).</param>
    public sealed record Entry(AuditResult? Result);

    /// <summary>How many documents were parsed so far (a view served from memory parses none).</summary>
    public long Parses => Interlocked.Read(ref _parses);

    /// <summary>Entries held now.</summary>
    public int Count => _cache.Count;

    /// <summary>The team's finished audit <paramref name="id"/>, parsed; null when there is none (missing, running, another team's).</summary>
    public Task<Entry?> GetAsync(AuditStore audits, Guid team, Guid id, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(audits);
        return GetAsync(team, id, t => audits.ResultAsync(team, id, t), ct);
    }

    /// <summary>As above, with the stored document read by <paramref name="load"/> (null: no finished result).</summary>
    internal async Task<Entry?> GetAsync(Guid team, Guid id, Func<CancellationToken, Task<string?>> load, CancellationToken ct)
    {
        if (_cache.TryGetValue((team, id), out Entry? kept)) return kept;
        if (await load(ct) is not { } json) return null; // only finished audits have one
        return Add(team, id, json);
    }

    /// <summary>Parses <paramref name="json"/> and keeps it under (team, audit).</summary>
    internal Entry Add(Guid team, Guid id, string json)
    {
        Interlocked.Increment(ref _parses);
        var entry = new Entry(AuditPage.TryRead(json));
        // A document larger than the whole budget is simply not kept.
        _cache.Set((team, id), entry, new MemoryCacheEntryOptions { Size = Math.Max(1, json.Length) });
        return entry;
    }

    public void Dispose() => _cache.Dispose();
}
