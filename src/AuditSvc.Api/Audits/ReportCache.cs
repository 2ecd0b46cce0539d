using System.Collections.Concurrent;
using AuditSvc.Api.Artifacts;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Jobs;

namespace AuditSvc.Api.Audits;

/// <summary>
/// The self-contained report of a finished audit, rendered once and kept in the artifact root: a finished audit's
/// audit.json never changes, so neither does its report. Concurrent first requests share one rendering.
/// </summary>
public sealed class ReportCache(ArtifactStore artifacts, AuditInputsLoader loader, IAuditEngine engine)
{
    private readonly ConcurrentDictionary<Guid, Lazy<Task<string>>> _rendering = new();

    /// <summary>The report's file; renders it first when it is not there yet.</summary>
    public async Task<string> PathAsync(Guid auditId, string auditJson, CancellationToken ct)
    {
        var path = Path.Combine(artifacts.Root, "reports", auditId.ToString("N") + ".html");
        if (File.Exists(path)) return path;
        var render = _rendering.GetOrAdd(auditId, id => new Lazy<Task<string>>(() => RenderAsync(id, auditJson, path)));
        try
        {
            return await render.Value.WaitAsync(ct);
        }
        finally
        {
            if (render.IsValueCreated && render.Value.IsCompleted) _rendering.TryRemove(auditId, out _);
        }
    }

    private async Task<string> RenderAsync(Guid auditId, string auditJson, string path)
    {
        // Not the caller's token: other requests wait on the same rendering.
        var html = await engine.RenderReportAsync(await loader.LoadAsync(auditId, CancellationToken.None), auditJson, CancellationToken.None);
        Directory.CreateDirectory(Path.GetDirectoryName(path)!);
        var temp = artifacts.ScratchPath(); // a kill mid-write leaves nothing under reports/
        try
        {
            // Streamed, not File.WriteAllTextAsync: its preallocation reports a full disk without the errno that makes it a 507.
            await using (var stream = new FileStream(temp, FileMode.CreateNew, FileAccess.Write, FileShare.None, 1 << 16, useAsync: true))
            await using (var writer = new StreamWriter(stream, new System.Text.UTF8Encoding(false)))
                await writer.WriteAsync(html.AsMemory(), CancellationToken.None);
            File.Move(temp, path, overwrite: true);
            return path;
        }
        finally
        {
            if (File.Exists(temp)) File.Delete(temp);
        }
    }
}
