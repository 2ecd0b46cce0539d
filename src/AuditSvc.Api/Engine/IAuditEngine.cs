using AuditSvc.Core.ImageSets;
using AuditSvc.Data.Audits;

namespace AuditSvc.Api.Engine;

/// <summary>What model intake tells the service: the recipe that will run and the layer catalogue, as JSON.</summary>
public sealed record ModelIntake(string RecipeJson, string LayersJson);

/// <summary>Everything one audit's jobs need, loaded from the database and the artifact root.</summary>
public sealed record AuditInputs(Guid AuditId, string ModelPath, string RecipeJson, string ImageSetFolder, ItemTable Items,
    string PolicyJson, int OnnxThreads, string WorkDirectory);

/// <summary>
/// An audit's chunk results as <see cref="IAuditEngine.RunChunkAsync"/> wrote them, in chunk order, handed over one at
/// a time: each stream is readable only inside <c>parse</c>, and the next chunk is read only when the caller moves on.
/// </summary>
public interface IChunkResults
{
    IAsyncEnumerable<T> ReadAsync<T>(Func<Stream, T> parse, CancellationToken ct);
}

/// <summary>The chunk results of one audit as kept in Postgres.</summary>
public sealed class StoredChunkResults(ChunkStore store, Guid auditId) : IChunkResults
{
    public IAsyncEnumerable<T> ReadAsync<T>(Func<Stream, T> parse, CancellationToken ct) => store.ReadResultsAsync(auditId, parse, ct);
}

/// <summary>
/// The seam between the service and the engine: jobs call it with ids resolved to files and tables.
/// The real implementation forwards to AuditSvc.Compute; tests use a trivial one to check the queue mechanics.
/// </summary>
public interface IAuditEngine
{
    /// <summary>False when the engine can only run an audit whole: the audit then gets a single chunk.</summary>
    bool SplitsIntoChunks { get; }

    /// <summary>Checks a model file; its recipe, when one was given, sits beside it as &lt;name&gt;.recipe.json.</summary>
    Task<ModelIntake> InspectModelAsync(string modelPath, CancellationToken ct);

    /// <summary>Reads an unpacked image set folder (manifest CSV or class-per-folder); labels must be among
    /// <paramref name="classNames"/> when given (the model's classes in output order).</summary>
    Task<ItemTable> IntakeImageSetAsync(string folder, IReadOnlyList<string>? classNames, CancellationToken ct);

    /// <summary>Runs items [start, start+count) and returns the chunk result as bytes to keep in Postgres.</summary>
    Task<byte[]> RunChunkAsync(AuditInputs inputs, int start, int count, CancellationToken ct);

    /// <summary>The browser report for a finished audit: its audit.json with the exemplar crops cut from the set's images.</summary>
    Task<string> RenderReportAsync(AuditInputs inputs, string auditJson, CancellationToken ct);

    /// <summary>
    /// One exemplar picture of an audit as PNG: the peak box with a margin, or the whole image at the model's framing
    /// with the box outlined. Null when the item or its file cannot be read (the page shows a placeholder).
    /// </summary>
    Task<byte[]?> RenderExemplarAsync(AuditInputs inputs, int item, AuditSvc.Core.Audits.BoxDto box, bool whole, CancellationToken ct) =>
        Task.FromResult<byte[]?>(null);

    /// <summary>
    /// Merges the chunk results, read one at a time in chunk order from <paramref name="chunks"/>, and runs the
    /// analysis: audit.json, verdict, findings, scores.
    /// </summary>
    Task<AuditOutcome> FinishAsync(AuditInputs inputs, IChunkResults chunks, CancellationToken ct);
}
