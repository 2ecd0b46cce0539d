using System.Collections.Concurrent;
using System.Text.Json;
using AuditSvc.Api.Artifacts;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Hosting;
using AuditSvc.Core;
using AuditSvc.Core.ImageSets;
using AuditSvc.Data.ImageSets;
using AuditSvc.Data.Models;
using Dapper;
using Microsoft.Extensions.Options;
using Npgsql;

namespace AuditSvc.Api.Jobs;

/// <summary>
/// Resolves an audit id to files and the item table. Image sets never change once stored, so a worker keeps the
/// last few tables instead of reading every item again for each chunk.
/// </summary>
public sealed class AuditInputsLoader(NpgsqlDataSource db, ModelStore models, ImageSetStore sets, ArtifactStore artifacts,
    IOptions<ServiceOptions> options)
{
    private readonly ConcurrentDictionary<Guid, Lazy<Task<ItemTable>>> _tables = new();

    public async Task<AuditInputs> LoadAsync(Guid auditId, CancellationToken ct)
    {
        await using var conn = await db.OpenConnectionAsync(ct);
        var a = await conn.QuerySingleOrDefaultAsync<(Guid TeamId, Guid ModelId, Guid SetId, string Policy)>(new CommandDefinition(
            "SELECT team_id, model_id, image_set_id, policy::text FROM audits WHERE id = @auditId",
            new { auditId }, cancellationToken: ct));
        if (a.TeamId == Guid.Empty) throw new AuditInputException($"audit {auditId}", "does not exist");
        var model = await models.GetAsync(a.TeamId, a.ModelId, ct) ?? throw new AuditInputException($"model {a.ModelId}", "is gone");
        if (_tables.Count > 8) _tables.Clear();
        var load = _tables.GetOrAdd(a.SetId, id => new Lazy<Task<ItemTable>>(() => LoadTableAsync(a.TeamId, id)));
        ItemTable table;
        try { table = await load.Value; }
        catch
        {
            _tables.TryRemove(a.SetId, out _); // do not keep a failure (a dropped connection) for the next job
            throw;
        }
        var folder = await conn.ExecuteScalarAsync<string>(new CommandDefinition(
            "SELECT relative_path FROM image_sets WHERE id = @setId", new { setId = a.SetId }, cancellationToken: ct));
        return new AuditInputs(auditId, artifacts.FullPath(model.RelativePath), model.Recipe, artifacts.FullPath(folder!), table,
            a.Policy, options.Value.OnnxThreads, Path.Combine(artifacts.Root, "scratch", "audit-" + auditId.ToString("N")));
    }

    private async Task<ItemTable> LoadTableAsync(Guid teamId, Guid setId)
    {
        var ct = CancellationToken.None; // shared by every job that asks; one job's cancellation must not poison it
        var set = await sets.GetAsync(teamId, setId, ct) ?? throw new AuditInputException($"image set {setId}", "is gone");
        var root = artifacts.FullPath(set.RelativePath);
        var items = await sets.ItemsAsync(setId, root, ct);
        return new ItemTable(
            JsonSerializer.Deserialize<List<string>>(set.Labels, ApiJson.Options)!,
            JsonSerializer.Deserialize<List<AttributeColumn>>(set.Attributes, ApiJson.Options)!,
            items,
            JsonSerializer.Deserialize<IntakeReport>(set.Report, ApiJson.Options)!);
    }
}
