using System.Text.Json;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Core.ImageSets;
using AuditSvc.Data.Audits;
using AuditSvc.Api.Hosting;
using AuditSvc.Api.Artifacts;
using ComputeModelIntake = AuditSvc.Compute.Models.ModelIntake;

namespace AuditSvc.Api.Engine;

/// <summary>
/// The engine in AuditSvc.Compute behind the service's seam. Model and image-set intake are the engine's own;
/// chunk and finish wait for the engine's audit pipeline and say so until then.
/// </summary>
public sealed class ComputeEngine(ArtifactStore artifacts) : IAuditEngine
{
    private readonly UnavailableEngine _pending = new();

    public Task<ModelIntake> InspectModelAsync(string modelPath, CancellationToken ct) => Task.Run(() =>
    {
        var loaded = ComputeModelIntake.Load(modelPath);
        var plan = loaded.Plan;
        var layers = JsonSerializer.Serialize(new
        {
            plan.InputName,
            plan.OutputName,
            plan.ClassCount,
            plan.Batch,
            read = plan.ReadLayers.Select(l => l.Name),
            layers = plan.Layers,
        }, ApiJson.Options);
        return new ModelIntake(JsonSerializer.Serialize(plan.Recipe, ApiJson.Options), layers);
    }, ct);

    public Task<ItemTable> IntakeImageSetAsync(string folder, CancellationToken ct) =>
        Task.Run(() => SetIntake.Read(folder, null, Path.Combine(artifacts.Root, "scratch")), ct);

    public Task<byte[]> RunChunkAsync(AuditInputs inputs, int start, int count, CancellationToken ct) =>
        _pending.RunChunkAsync(inputs, start, count, ct);

    public Task<AuditOutcome> FinishAsync(AuditInputs inputs, IReadOnlyList<byte[]> chunks, CancellationToken ct) =>
        _pending.FinishAsync(inputs, chunks, ct);
}
