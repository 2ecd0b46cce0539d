using System.Collections.Concurrent;
using System.Diagnostics;
using System.Text.Json;
using AuditSvc.Api.Artifacts;
using AuditSvc.Api.Hosting;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Compute.Reporting;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Reporting;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Data.Audits;
using ComputeModelIntake = AuditSvc.Compute.Models.ModelIntake;

namespace AuditSvc.Api.Engine;

/// <summary>
/// The engine in AuditSvc.Compute behind the service's seam: chunk jobs call <see cref="AuditPipeline.RunChunk"/>
/// on their items and the merge calls <see cref="AuditPipeline.FinishChunks"/>, so the service's audit.json is the
/// document the command line writes for the same inputs (byte for byte as <see cref="AuditJson.Write"/> puts it on disk).
/// </summary>
public sealed class ComputeEngine(ArtifactStore artifacts) : IAuditEngine, IDisposable
{
    // Chunk jobs of one model reuse its pass's session (see PassPool).
    private readonly PassPool _passes = new();

    /// <summary>Passes (each with its ONNX Runtime session) built for chunk jobs so far, and how many wait idle (tests).</summary>
    internal (int Built, int Idle) ChunkPasses => (_passes.Built, _passes.Idle);

    // Loading checks and rewrites the graph; a worker runs many chunks of the same model, so keep the last few.
    private readonly ConcurrentDictionary<string, Lazy<LoadedModel>> _models = new(StringComparer.Ordinal);

    public bool SplitsIntoChunks => true;

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
        return new ModelIntake(RecipeText.Write(plan.Recipe), layers);
    }, ct);

    public Task<ItemTable> IntakeImageSetAsync(string folder, IReadOnlyList<string>? classNames, CancellationToken ct) =>
        Task.Run(() => SetIntake.Read(folder, classNames, Path.Combine(artifacts.Root, "scratch")), ct);

    public Task<byte[]> RunChunkAsync(AuditInputs inputs, int start, int count, CancellationToken ct) => Task.Run(() =>
    {
        var clock = Stopwatch.StartNew();
        var model = Model(inputs.ModelPath);
        var options = PassOptionsFor(inputs);
        var chunk = _passes.Use($"{model.Plan.Sha256}|{model.Plan.ModelPath}|{options.InferenceThreads}",
            () => AuditPipeline.ChunkPass(model, options),
            pass => AuditPipeline.RunChunk(pass, inputs.Items, start, count, ct));
        using var buffer = new MemoryStream();
        // The chunk's pass time goes first, so the merge can report the pass's time as the sum over chunks.
        buffer.Write(BitConverter.GetBytes(clock.Elapsed.TotalSeconds));
        chunk.Write(buffer);
        return buffer.ToArray();
    }, ct);

    public Task<AuditOutcome> FinishAsync(AuditInputs inputs, IChunkResults chunks, CancellationToken ct) => Task.Run(async () =>
    {
        var policy = PolicyFile.Parse(inputs.PolicyJson, "policy");
        Directory.CreateDirectory(inputs.WorkDirectory);
        try
        {
            var options = PassOptionsFor(inputs) with { SpillDirectory = Path.Combine(inputs.WorkDirectory, "scores") };
            var clock = new PhaseClock();
            double passSeconds = 0;
            // One chunk at a time: read from its row, folded into the merge, dropped before the next is read.
            var result = await AuditPipeline.FinishChunksAsync(Model(inputs.ModelPath), inputs.Items, async merger =>
            {
                await foreach (var chunk in chunks.ReadAsync(ReadChunk, ct))
                {
                    passSeconds += chunk.PassSeconds;
                    merger.Add(chunk.Result);
                }
                return passSeconds;
            }, policy, options, clock.Wrap(), ct);
            // Intake ran at upload and the report is drawn on first request: neither is part of this audit's clock.
            result = result with { Phases = clock.Times(intake: null, report: null, pass: passSeconds) };
            return Outcome(AuditJson.Serialize(result) + "\n", result);
        }
        finally
        {
            if (Directory.Exists(inputs.WorkDirectory)) Directory.Delete(inputs.WorkDirectory, recursive: true);
        }
    }, ct);

    /// <summary>A stored chunk: the seconds its pass took, then the chunk result.</summary>
    public sealed record StoredChunk(double PassSeconds, ChunkResult Result);

    /// <summary>Reads what <see cref="RunChunkAsync"/> wrote.</summary>
    public static StoredChunk ReadChunk(Stream stream)
    {
        Span<byte> seconds = stackalloc byte[sizeof(double)];
        stream.ReadExactly(seconds);
        return new StoredChunk(BitConverter.ToDouble(seconds), ChunkResult.Read(stream));
    }

    public Task<string> RenderReportAsync(AuditInputs inputs, string auditJson, CancellationToken ct) => Task.Run(() =>
    {
        var result = AuditJson.Deserialize(auditJson);
        // The pictures are made on every core before the report is rendered, as the command line's report is.
        return new ExemplarImages(item => inputs.Items.Items[item].Path, Model(inputs.ModelPath).Plan.Recipe).RenderReport(result);
    }, ct);

    public Task<byte[]?> RenderExemplarAsync(AuditInputs inputs, int item, BoxDto box, bool whole, CancellationToken ct) => Task.Run(() =>
    {
        if ((uint)item >= (uint)inputs.Items.Items.Count) return null;
        // A page asks for dozens of pictures of one audit: its recipe is read and its cutter built once, not per picture.
        if (_pictures.Count > 16) _pictures.Clear();
        var cutter = _pictures.GetOrAdd(inputs.AuditId, _ => new ExemplarImages(i => inputs.Items.Items[i].Path, AuditSvc.Api.Models.StoredRecipe.Read(inputs.RecipeJson)));
        return cutter.Png(item, box, whole);
    }, ct);

    private readonly ConcurrentDictionary<Guid, ExemplarImages> _pictures = new();

    private static AuditOutcome Outcome(string json, AuditResult result)
    {
        var findings = result.Findings.Select((f, i) => new FindingRow(i, f.Layer, f.Unit, f.Attribute, f.Value,
            Finite(f.OddsRatio), Finite(f.QValue), f.Region, JsonSerializer.Serialize(f, AuditJson.Options))).ToList();
        var scores = result.Attributes.Select(a => new AttributeScoreRow(a.Name, a.Leakage ?? 0, a.Verdict,
            JsonSerializer.Serialize(a.Measures, AuditJson.Options))).ToList();
        return new AuditOutcome(json, result.Verdict, findings, scores);
    }

    // The pass would otherwise size its inference and decode threads to the whole machine, once per job thread.
    private static PassOptions PassOptionsFor(AuditInputs inputs) =>
        new() { InferenceThreads = inputs.OnnxThreads, DecodeThreads = inputs.OnnxThreads };

    private LoadedModel Model(string path)
    {
        if (_models.Count > 4) _models.Clear();
        return _models.GetOrAdd(path, p => new Lazy<LoadedModel>(() => ComputeModelIntake.Load(p), LazyThreadSafetyMode.PublicationOnly)).Value;
    }

    public void Dispose() => _passes.Dispose();

    // Postgres double precision takes infinities, but JSON detail and clients read them badly; keep them out of columns.
    private static double? Finite(double v) => double.IsFinite(v) ? v : null;
}
