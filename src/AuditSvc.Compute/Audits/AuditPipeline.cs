using System.Diagnostics;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Core.Activations;
using AuditSvc.Core.Analysis;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;

namespace AuditSvc.Compute.Audits;

/// <summary>What to audit and how.</summary>
/// <param name="WorkDirectory">Scratch space: unpacked archives, spilled score blocks.</param>
/// <param name="ImagesRoot">A folder manifest rows may also lead into (the command line's --images-root); null: the set's folder only.</param>
public sealed record AuditRequest(string ModelPath, string DataPath, ModelLoadOptions ModelOptions, AuditPolicy Policy, PassOptions Pass, string WorkDirectory,
    string? ImagesRoot = null);

/// <summary>An audit's document together with what is needed to render its exemplars.</summary>
public sealed record AuditRun(AuditResult Result, ItemTable Table, Core.Models.ModelPlan Plan);

/// <summary>Stage of a running audit, for progress lines and the service's state.</summary>
public enum AuditStage { Intake, Pass, Analysis, Interventions, Done }

/// <summary>
/// The main job in-process: model intake, set intake, activation pass, analysis, interventions, verdict.
/// The command line calls <see cref="Run"/>; the service runs the same steps as chunk jobs.
/// </summary>
public static class AuditPipeline
{
    public static AuditRun Run(AuditRequest request, IProgress<PassProgress>? progress = null, Action<AuditStage, string>? stage = null, CancellationToken ct = default)
    {
        stage?.Invoke(AuditStage.Intake, "reading the model and the image set");
        MemoryTrace.Mark("start");
        var (table, pass) = Start(request);
        using (pass)
        {
            stage?.Invoke(AuditStage.Pass, $"{table.Items.Count} images, {pass.Layers.Sum(l => l.Count)} units in {pass.Layers.Count} layers, batch {pass.Options.BatchSize}");
            var clock = Stopwatch.StartNew();
            // The pass's session is built (from a file; the model's bytes go before the runtime's optimiser needs room)
            // on another thread while the decoders start on the first images: the build runs on one core.
            var building = pass.PrepareInBackground(releaseModelBytes: true);
            ActivationResult act;
            try
            {
                // Small sets keep their decoded images for the interventions, which would otherwise decode most of them again.
                act = pass.Run(table, progress, ct, keepFittedBytes: ImageRuns.CacheBytes);
            }
            catch
            {
                // The run met the build's failure itself (the session is made once), or failed on its own: either way
                // the build must be over before the pass goes.
                try { building.Wait(CancellationToken.None); } catch (AggregateException) { }
                throw;
            }
            // A run over no image never asked for the session: its build's failure, if any, surfaces here.
            building.GetAwaiter().GetResult();
            double passSeconds = clock.Elapsed.TotalSeconds;
            MemoryTrace.Mark($"activation run done ({pass.Early.Decoded} images decoded while its session was built)");
            // The pass's plan: a batch the intake left unchecked is settled now.
            var plan = pass.Plan;
            try
            {
                return new AuditRun(Finish(pass, table, plan, act, request.Policy, passSeconds, stage, ct), table, plan);
            }
            finally
            {
                (act.Scores as IDisposable)?.Dispose();
            }
        }
    }

    /// <summary>
    /// Model and set intake, and the pass over the model. Its own frame, so that the loaded model (and its bytes) is not
    /// held by the caller once the pass has it: <see cref="ActivationPass.Prepare"/> can then let the bytes go.
    /// </summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.NoInlining)]
    private static (ItemTable Table, ActivationPass Pass) Start(AuditRequest request)
    {
        Directory.CreateDirectory(request.WorkDirectory);
        // The set's intake (every file identified and hashed) runs on the other core while the model's runs on this one.
        // It needs only the class names, which come from --labels or the recipe file beside the model, not from the graph.
        IReadOnlyList<string>? names = null;
        var reading = Task.Run(() =>
        {
            names = request.ModelOptions.Recipe?.ClassNames ?? RecipeLoader.ReadFile(RecipeLoader.RecipePathFor(request.ModelPath))?.ClassNames;
            return SetIntake.Read(request.DataPath, names, request.WorkDirectory, request.ImagesRoot);
        });
        LoadedModel model;
        try
        {
            // The batch a file fixes at 1 is tested by the pass on its own session, not by two sessions here.
            model = ModelIntake.Load(request.ModelPath, request.ModelOptions with { BatchCheckOnPass = true });
        }
        catch
        {
            // The model's problem is reported first, as when the two ran one after the other.
            try { reading.Wait(CancellationToken.None); } catch (AggregateException) { }
            throw;
        }
        MemoryTrace.Mark("model intake done");
        var table = reading.GetAwaiter().GetResult();
        // The names the set was read with are the plan's by construction (the recipe resolves them the same way); should
        // they ever differ, the set is read again with the plan's.
        if (!SameNames(names, model.Plan.Recipe.ClassNames))
            table = SetIntake.Read(request.DataPath, model.Plan.Recipe.ClassNames, request.WorkDirectory, request.ImagesRoot);
        MemoryTrace.Mark($"set intake done ({table.Items.Count} images)");
        CheckLabels(table, model);
        PolicyFile.CheckAttributes(request.Policy, table.Attributes.Select(a => a.Name).ToList(), "policy");
        var passOptions = request.Pass with { SpillDirectory = request.Pass.SpillDirectory ?? Path.Combine(request.WorkDirectory, "scores") };
        // What the set's intake left goes back to the system with the model's bytes, once the pass's session file is
        // written (Run prepares the pass with releaseModelBytes): one full collection there, not another here.
        return (table, new ActivationPass(model.Plan, model.RewrittenModel, passOptions));
    }

    /// <summary>
    /// One chunk of a distributed audit: items [start, start + count) through the model. The service runs these as
    /// independent jobs and hands the chunks to <see cref="FinishChunks"/>.
    /// </summary>
    public static ChunkResult RunChunk(LoadedModel model, ItemTable table, int start, int count, PassOptions options, CancellationToken ct = default)
    {
        using var pass = ChunkPass(model, options);
        return RunChunk(pass, table, start, count, ct);
    }

    /// <summary>The pass a chunk runs on: its scores stay in memory (a chunk is bounded) and go into the chunk result.
    /// One pass serves any number of chunks of its model, one after another (the service keeps them between jobs).</summary>
    public static ActivationPass ChunkPass(LoadedModel model, PassOptions options) =>
        new(model.Plan, model.RewrittenModel, options with { ScoreMemoryLimitBytes = long.MaxValue, SpillDirectory = null });

    /// <summary>One chunk on a pass made by <see cref="ChunkPass"/>.</summary>
    public static ChunkResult RunChunk(ActivationPass pass, ItemTable table, int start, int count, CancellationToken ct = default)
    {
        var act = pass.Run(table, null, ct, start, count);
        try
        {
            return ChunkResult.From(act, start, count);
        }
        finally
        {
            (act.Scores as IDisposable)?.Dispose();
        }
    }

    /// <summary>Merges the chunks of an audit, then analysis, interventions and verdict, as <see cref="Run"/> does.</summary>
    public static AuditResult FinishChunks(LoadedModel model, ItemTable table, IReadOnlyList<ChunkResult> chunks, AuditPolicy policy, PassOptions options,
        double passSeconds, Action<AuditStage, string>? stage = null, CancellationToken ct = default)
    {
        if (chunks.Count == 0) throw new ArgumentException("no chunks", nameof(chunks));
        // The feed is synchronous (the chunks are in hand), so the task has completed when it returns.
        return FinishChunksAsync(model, table, merger =>
        {
            foreach (var c in chunks.OrderBy(c => c.Start)) merger.Add(c);
            return Task.FromResult(passSeconds);
        }, policy, options, stage, ct).GetAwaiter().GetResult();
    }

    /// <summary>
    /// Merges chunks handed over one at a time: <paramref name="feed"/> adds them to the
    /// merger in item order (reading each from wherever it is kept) and returns the pass's seconds summed over them.
    /// </summary>
    public static async Task<AuditResult> FinishChunksAsync(LoadedModel model, ItemTable table, Func<ChunkMerger, Task<double>> feed,
        AuditPolicy policy, PassOptions options, Action<AuditStage, string>? stage = null, CancellationToken ct = default)
    {
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, options);
        ActivationResult act;
        double passSeconds;
        using (var merger = new ChunkMerger(pass.Layers, table.Items.Count, pass.Options))
        {
            passSeconds = await feed(merger);
            act = merger.Finish();
        }
        try
        {
            return Finish(pass, table, model.Plan, act, policy, passSeconds, stage, ct);
        }
        finally
        {
            (act.Scores as IDisposable)?.Dispose();
        }
    }

    /// <summary>Analysis, interventions and verdict over a finished activation pass.</summary>
    public static AuditResult Finish(ActivationPass pass, ItemTable table, Core.Models.ModelPlan plan, ActivationResult act, AuditPolicy policy, double passSeconds,
        Action<AuditStage, string>? stage = null, CancellationToken ct = default)
    {
        if (!act.Scored.Any(s => s))
            throw new AuditInputException(table.Report.Source, $"no image could be pushed through the model ({act.Problems.Count} failed; first: {act.Problems.FirstOrDefault()?.File}: {act.Problems.FirstOrDefault()?.Reason})");
        stage?.Invoke(AuditStage.Analysis, "rank tests of every unit against every attribute value");
        var analysis = AuditAnalysis.Analyze(table, plan, act, policy, ct);
        MemoryTrace.Mark("rank tests done");
        var (extended, places) = PlaceCues.Infer(table, plan, act, analysis, policy.MinGroupSize);
        MemoryTrace.Mark("place cues done");
        analysis = AuditAnalysis.WithInferred(extended, act, analysis, policy);
        var targets = CueTargets.Choose(extended, act, analysis, places, policy);
        // The scores matrix was read for the last time above (the interventions and the verdict use the peaks and the
        // predictions): its blocks in memory, up to the scores limit, go back before the interventions build their
        // second session. The callers' own Dispose after Finish is then a no-op.
        (act.Scores as IDisposable)?.Dispose();
        MemoryTrace.Mark("analysis done");
        stage?.Invoke(AuditStage.Interventions, $"{analysis.Findings.Count} findings, {places.Count(p => p.Attribute >= 0)} place cues; cue regions and paired interventions for {targets.Count} cues");
        var clock = Stopwatch.StartNew();
        using var runs = new ImageRuns(pass);
        var evidence = Interventions.Run(runs, extended, act, targets, policy, ct);
        MemoryTrace.Mark("interventions done");
        table = extended;
        var inputs = new AuditInputs(table, plan, act, analysis, evidence, places, policy, passSeconds, clock.Elapsed.TotalSeconds, runs.Runs,
            pass.Options.BatchSize, DateTimeOffset.UtcNow)
        {
            InferenceThreads = pass.Options.InferenceThreads,
            DecodeThreads = pass.Options.DecodeThreads,
            Reduce = pass.Options.ReduceInGraph == false ? "full-maps" : "in-graph",
        };
        stage?.Invoke(AuditStage.Done, "verdict");
        var result = AuditAssembler.Build(inputs);
        MemoryTrace.Mark("verdict");
        return result;
    }

    private static bool SameNames(IReadOnlyList<string>? a, IReadOnlyList<string>? b) =>
        a is null ? b is null : b is not null && a.SequenceEqual(b, StringComparer.Ordinal);

    private static void CheckLabels(ItemTable table, LoadedModel model)
    {
        if (table.Labels.Count > model.Plan.ClassCount)
            throw new AuditInputException("label", $"the image set has {table.Labels.Count} labels but the model has {model.Plan.ClassCount} outputs; give --labels in output order");
    }
}
