using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Models;

namespace AuditSvc.Compute.Bench;

/// <summary>One step of <see cref="IntakeMemory.Measure"/>: the peak resident bytes during the step, the resident bytes after it, and its wall-clock time.</summary>
public sealed record MemoryStep(string Step, long PeakBytes, long ResidentBytes, double Seconds);

/// <summary>What intake and the pass's sessions cost in resident memory, step by step, for one model.</summary>
/// <param name="StartBytes">Resident before anything: the .NET runtime and the command line.</param>
/// <param name="RuntimeBytes">Resident once ONNX Runtime's library is loaded, before any model: what no model costs.</param>
public sealed record IntakeMemoryResult(string Model, long ModelFileBytes, long StartBytes, long RuntimeBytes, IReadOnlyList<MemoryStep> Steps)
{
    /// <summary>The highest peak of all steps.</summary>
    public long PeakBytes => Steps.Count == 0 ? StartBytes : Steps.Max(s => s.PeakBytes);

    /// <summary>The highest peak above <see cref="RuntimeBytes"/>: what the model costs at its most.</summary>
    public long ModelPeakBytes => Math.Max(0, PeakBytes - RuntimeBytes);
}

/// <summary>
/// Measures, in this process, the resident memory of model intake and of building the pass on the loaded model:
/// the peak (VmHWM, reset before each step where the system allows it) and what stays resident after each step.
/// A printed measurement, not a test: the numbers depend on the runtime, the allocator and the machine.
/// </summary>
public static class IntakeMemory
{
    public static IntakeMemoryResult Measure(string modelPath, ModelLoadOptions? load = null, PassOptions? pass = null)
    {
        var steps = new List<MemoryStep>();
        var clock = System.Diagnostics.Stopwatch.StartNew();
        PeakMemory.Trim();
        long start = PeakMemory.CurrentBytes();
        // The runtime's library, loaded before the model so that what follows is what the model costs.
        OrtEnvironment.EnsureQuiet();
        using (new Microsoft.ML.OnnxRuntime.SessionOptions()) { }
        PeakMemory.Trim();
        long runtime = PeakMemory.CurrentBytes();
        PeakMemory.Reset();
        using var activation = Intake(modelPath, load, pass);
        Step(steps, clock, "intake");
        PeakMemory.Reset();
        // As the command line's audit builds it: the model's bytes go once the session's file is written.
        activation.Prepare(releaseModelBytes: true);
        Step(steps, clock, "pass session built");
        PeakMemory.Reset();
        int batch = activation.Options.BatchSize, slot = activation.Preprocessor.SlotLength;
        var zeros = new float[(long)batch * slot];
        activation.RunTensors(zeros, batch, null, CancellationToken.None);
        Step(steps, clock, $"first batch of {batch}");
        PeakMemory.Reset();
        PeakMemory.Trim();
        Step(steps, clock, "after compacting GC and malloc_trim");
        return new IntakeMemoryResult(Path.GetFileName(modelPath), new FileInfo(modelPath).Length, start, runtime, steps);
    }

    // Its own frame: once it returns, only the pass holds the loaded model's bytes.
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.NoInlining)]
    private static ActivationPass Intake(string modelPath, ModelLoadOptions? load, PassOptions? pass)
    {
        var model = ModelIntake.Load(modelPath, load);
        return new ActivationPass(model.Plan, model.RewrittenModel, pass ?? new PassOptions());
    }

    private static void Step(List<MemoryStep> steps, System.Diagnostics.Stopwatch clock, string name)
    {
        steps.Add(new MemoryStep(name, PeakMemory.PeakBytes(), PeakMemory.CurrentBytes(), clock.Elapsed.TotalSeconds));
        clock.Restart();
    }
}
