using System.Diagnostics;
using System.Runtime.InteropServices;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Models;
using AuditSvc.Core.Models;
using Microsoft.ML.OnnxRuntime;

namespace AuditSvc.Compute.Bench;

/// <summary>
/// Measures, in one process, raw inference (the original model on pre-decoded tensors, class output only),
/// the activation pass on the same tensors, the whole pass from encoded files, decoding alone, and peak
/// resident memory at N and at a multiple of N, plus resident memory after repeated passes (leaks).
/// Memory phases run first, before the pre-decoded tensors exist, so those do not mask growth.
/// </summary>
public static class ThroughputBench
{
    public static BenchResult Run(BenchOptions o, Action<string>? log, CancellationToken ct)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(o.Images);
        var work = o.WorkDirectory ?? Path.Combine(Path.GetTempPath(), "auditsvc-bench-" + Guid.NewGuid().ToString("N"));
        try
        {
            return Measure(o, work, log ?? (_ => { }), ct);
        }
        finally
        {
            if (o.WorkDirectory is null && Directory.Exists(work)) Directory.Delete(work, recursive: true);
        }
    }

    private static BenchResult Measure(BenchOptions o, string work, Action<string> log, CancellationToken ct)
    {
        var model = ModelIntake.Load(o.ModelPath);
        var options = new PassOptions { BatchSize = o.BatchSize, InferenceThreads = o.Threads, DecodeThreads = o.Threads, SpillDirectory = Path.Combine(work, "spill") };
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, options);
        var opt = pass.Options;
        int slot = pass.Preprocessor.SlotLength, units = pass.Layers.Sum(l => l.Count);
        log($"model {Path.GetFileName(o.ModelPath)}: {units} units in {pass.Layers.Count} layers, batch {opt.BatchSize}, " +
            $"{opt.InferenceThreads} inference / {opt.DecodeThreads} decode threads, {model.Plan.Batch}");

        log($"writing {o.Images} photos of {o.PhotoWidth}x{o.PhotoHeight} to {work}");
        var files = BenchImages.Write(Path.Combine(work, "images"), o.Images, o.PhotoWidth, o.PhotoHeight);
        var table = BenchImages.Table(files, o.Images, work);
        var big = BenchImages.Table(files, o.Images * Math.Max(1, o.MemoryFactor), work);

        // Warm-up: JIT, ORT arenas, thread pools.
        pass.Run(BenchImages.Table(files, Math.Min(o.Images, opt.BatchSize * 2), work), null, ct);

        PeakMemory.Reset();
        var whole = Timed(o.Images, () => pass.Run(table, null, ct));
        long peakN = PeakMemory.PeakBytes();
        log($"whole pass at N={o.Images}: {whole.ImagesPerSecond:0.0} images/s, peak {peakN >> 20} MB");
        PeakMemory.Reset();
        var wholeBig = Timed(big.Items.Count, () => pass.Run(big, null, ct));
        long peakBig = PeakMemory.PeakBytes();
        log($"whole pass at {big.Items.Count}: {wholeBig.ImagesPerSecond:0.0} images/s, peak {peakBig >> 20} MB");

        var resident = new List<long>();
        for (int r = 0; r < o.LeakRuns; r++)
        {
            pass.Run(table, null, ct);
            GC.Collect();
            GC.WaitForPendingFinalizers();
            GC.Collect();
            resident.Add(PeakMemory.CurrentBytes());
        }
        if (resident.Count > 0) log($"resident after {resident.Count} more passes: {string.Join(", ", resident.Select(b => $"{b >> 20} MB"))}");

        var tensors = new float[(long)o.Images * slot];
        var decode = DecodeAll(pass, files, tensors, opt.DecodeThreads);
        decode = Best(decode, DecodeAll(pass, files, tensors, opt.DecodeThreads));
        log($"decode alone: {decode.ImagesPerSecond:0.0} images/s");

        var (rawBytes, rawSource) = RawModel(o.ModelPath, model, opt.BatchSize);
        using var raw = new ModelRunner(model.Plan, rawBytes, model.Plan.Batch == BatchMode.ConcurrentSingle ? 1 : opt.InferenceThreads);
        RunRaw(raw, tensors, Math.Min(o.Images, opt.BatchSize * 2), slot, opt);
        pass.RunTensors(tensors, Math.Min(o.Images, opt.BatchSize * 2), null, ct);
        PhaseRate? rawRate = null, passRate = null;
        for (int r = 0; r < Math.Max(1, o.Rounds); r++)
        {
            // Alternate the two so load from other processes hits both alike; keep the best of each.
            rawRate = Best(rawRate, Timed(o.Images, () => RunRaw(raw, tensors, o.Images, slot, opt)));
            passRate = Best(passRate, Timed(o.Images, () => pass.RunTensors(tensors, o.Images, null, ct)));
            ct.ThrowIfCancellationRequested();
        }
        log($"raw inference: {rawRate!.ImagesPerSecond:0.0} images/s ({rawSource}); activation pass on tensors: {passRate!.ImagesPerSecond:0.0} images/s");

        double bound = 1 / (1 / decode.ImagesPerSecond + 1 / rawRate.ImagesPerSecond);
        double? torch = null;
        string? torchNote = null;
        if (o.TorchScript is not null)
        {
            var arch = TorchBaseline.ArchitectureOf(o.ModelPath);
            (torch, torchNote) = arch is null
                ? (null, "no eager-mode rebuild of this architecture")
                : TorchBaseline.Run(o.Python, o.TorchScript, arch, Path.Combine(work, "images"), o.PhotoWidth, o.PhotoHeight, opt.InferenceThreads, opt.BatchSize, ct);
            log($"eager-mode script: {(torch is { } t ? $"{t:0.0} images/s" : "not run")} ({torchNote})");
        }
        return new BenchResult(
            Path.GetFileName(o.ModelPath), MachineName(), Environment.ProcessorCount, o.Images, opt.BatchSize, opt.InferenceThreads, opt.DecodeThreads,
            model.Plan.Batch == BatchMode.Batched ? "batched" : "concurrent-single", units, $"{o.PhotoWidth}x{o.PhotoHeight}", rawSource,
            rawRate, passRate, whole, decode, bound, peakN, peakBig, big.Items.Count, wholeBig, resident,
            model.Plan.ClassCount * sizeof(float) + sizeof(int) + sizeof(bool), LoadAverage())
        {
            TorchImagesPerSecond = torch,
            TorchNote = torchNote,
        };
    }

    private static PhaseRate Timed(int images, Action run)
    {
        var clock = Stopwatch.StartNew();
        run();
        double s = clock.Elapsed.TotalSeconds;
        return new PhaseRate(images / Math.Max(1e-9, s), s);
    }

    private static PhaseRate Best(PhaseRate? a, PhaseRate b) => a is null || b.ImagesPerSecond > a.ImagesPerSecond ? b : a;

    private static PhaseRate DecodeAll(ActivationPass pass, IReadOnlyList<string> files, float[] tensors, int threads)
    {
        var pre = pass.Preprocessor;
        int slot = pre.SlotLength;
        return Timed(files.Count, () => Parallel.For(0, files.Count, new ParallelOptions { MaxDegreeOfParallelism = threads }, i =>
        {
            using var image = pre.Load(files[i]);
            pre.Write(image, tensors.AsSpan((int)((long)i * slot), slot));
        }));
    }

    /// <summary>
    /// The original model's bytes when they run at the pass's batch; a model whose batch is fixed at 1 but was
    /// freed by the intake runs as rewritten, asking only for the class output.
    /// </summary>
    private static (byte[] Bytes, string Source) RawModel(string path, LoadedModel model, int batch)
    {
        var original = File.ReadAllBytes(path);
        if (model.Plan.Batch == BatchMode.ConcurrentSingle || batch == 1) return (original, "original model");
        try
        {
            using var session = new InferenceSession(original);
            var dims = session.InputMetadata[model.Plan.InputName].Dimensions;
            if (dims.Length == 0 || dims[0] <= 0) return (original, "original model");
        }
        catch (OnnxRuntimeException)
        {
        }
        return (model.RewrittenModel, "rewritten model, class output only (the original's batch is fixed at 1)");
    }

    private static void RunRaw(ModelRunner raw, float[] tensors, int images, int slot, PassOptions opt)
    {
        var mem = tensors.AsMemory();
        if (raw.Plan.Batch == BatchMode.ConcurrentSingle)
        {
            for (int s = 0; s < images; s += opt.BatchSize)
            {
                int s0 = s, count = Math.Min(opt.BatchSize, images - s);
                Parallel.For(0, count, new ParallelOptions { MaxDegreeOfParallelism = opt.InferenceThreads }, i =>
                    raw.Run(mem.Slice((s0 + i) * slot, slot), 1, static (_, _) => { }, readLayers: false));
            }
            return;
        }
        for (int s = 0; s < images; s += opt.BatchSize)
        {
            int count = Math.Min(opt.BatchSize, images - s);
            raw.Run(mem.Slice(s * slot, count * slot), count, static (_, _) => { }, readLayers: false);
        }
    }

    private static string MachineName()
    {
        string cpu = "unknown CPU";
        try
        {
            cpu = File.ReadLines("/proc/cpuinfo").FirstOrDefault(l => l.StartsWith("model name", StringComparison.Ordinal))?.Split(':', 2)[1].Trim() ?? cpu;
        }
        catch (IOException)
        {
        }
        return $"{cpu}, {Environment.ProcessorCount} cores, {RuntimeInformation.OSDescription}, {RuntimeInformation.FrameworkDescription}";
    }

    private static double LoadAverage()
    {
        try
        {
            return double.Parse(File.ReadAllText("/proc/loadavg").Split(' ')[0], System.Globalization.CultureInfo.InvariantCulture);
        }
        catch (Exception e) when (e is IOException or FormatException or UnauthorizedAccessException)
        {
            return double.NaN;
        }
    }
}
