using System.Text;
using System.Text.Json;
using AuditSvc.Api.Artifacts;
using AuditSvc.Api.Hosting;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Data.Audits;
using ComputeModelIntake = AuditSvc.Compute.Models.ModelIntake;

namespace AuditSvc.Api.Engine;

/// <summary>
/// The engine in AuditSvc.Compute behind the service's seam. The engine has no chunked pass yet, so an audit
/// runs whole as one chunk through the same <see cref="AuditPipeline.Run"/> the command line calls, and its
/// audit.json is the same document, byte for byte as the command line writes it.
/// </summary>
public sealed class ComputeEngine(ArtifactStore artifacts) : IAuditEngine
{
    public bool SplitsIntoChunks => false;

    public Task<ModelIntake> InspectModelAsync(string modelPath, CancellationToken ct) => Task.Run(() =>
    {
        var plan = ComputeModelIntake.Load(modelPath).Plan;
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

    public Task<ItemTable> IntakeImageSetAsync(string folder, IReadOnlyList<string>? classNames, CancellationToken ct) =>
        Task.Run(() => SetIntake.Read(folder, classNames, Path.Combine(artifacts.Root, "scratch")), ct);

    public Task<byte[]> RunChunkAsync(AuditInputs inputs, int start, int count, CancellationToken ct) => Task.Run(() =>
    {
        if (start != 0 || count != inputs.Items.Items.Count)
            throw new NotSupportedException("the engine runs an audit whole; this audit was split into chunks");
        var request = new AuditRequest(inputs.ModelPath, inputs.ImageSetFolder, new ModelLoadOptions(),
            PolicyFile.Parse(inputs.PolicyJson, "policy"), new PassOptions { InferenceThreads = inputs.OnnxThreads }, inputs.WorkDirectory);
        try
        {
            var run = AuditPipeline.Run(request, ct: ct);
            return Encoding.UTF8.GetBytes(AuditJson.Serialize(run.Result) + "\n"); // as AuditJson.Write puts it on disk
        }
        finally
        {
            if (Directory.Exists(inputs.WorkDirectory)) Directory.Delete(inputs.WorkDirectory, recursive: true);
        }
    }, ct);

    public Task<AuditOutcome> FinishAsync(AuditInputs inputs, IReadOnlyList<byte[]> chunks, CancellationToken ct)
    {
        if (chunks.Count != 1) throw new NotSupportedException($"expected the whole audit in one chunk, got {chunks.Count}");
        var json = Encoding.UTF8.GetString(chunks[0]);
        var result = AuditJson.Deserialize(json);
        var findings = result.Findings.Select((f, i) => new FindingRow(i, f.Layer, f.Unit, f.Attribute, f.Value,
            Finite(f.OddsRatio), Finite(f.QValue), f.Region, JsonSerializer.Serialize(f, AuditJson.Options))).ToList();
        var scores = result.Attributes.Select(a => new AttributeScoreRow(a.Name, a.Leakage ?? 0, a.Verdict,
            JsonSerializer.Serialize(a.Measures, AuditJson.Options))).ToList();
        return Task.FromResult(new AuditOutcome(json, result.Verdict, findings, scores));
    }

    // Postgres double precision takes infinities, but JSON detail and clients read them badly; keep them out of columns.
    private static double? Finite(double v) => double.IsFinite(v) ? v : null;
}
