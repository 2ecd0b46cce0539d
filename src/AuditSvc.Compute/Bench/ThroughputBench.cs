using System.Diagnostics;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Models;
using AuditSvc.Core.Models;

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
        var options = new PassOptions { BatchSize = o.BatchSize, InferenceThreads = o.Threads, DecodeThreads = o.DecodeThreads > 0 ? o.DecodeThreads : o.Threads, Spinning = o.Spinning, SpillDirectory = Path.Combine(work, "spill") };
        using var pass = new ActivationPass(model.Plan, model.RewrittenModel, options);
        // The session is built here, as before it was built lazily: "resident after the intake" includes it.
        pass.Prepare();
        var opt = pass.Options;
        int slot = pass.Preprocessor.SlotLength, units = pass.Layers.Sum(l => l.Count);
        log($"model {Path.GetFileName(o.ModelPath)}: {units} units in {pass.Layers.Count} layers, batch {opt.BatchSize}, " +
            $"{opt.InferenceThreads} inference / {opt.DecodeThreads} decode threads, {model.Plan.Batch}");

        log($"writing {o.Images} photos of {o.PhotoWidth}x{o.PhotoHeight} to {work}");
        var files = BenchImages.Write(Path.Combine(work, "images"), o.Images, o.PhotoWidth, o.PhotoHeight);
        var table = BenchImages.Table(files, o.Images, work);
        var big = BenchImages.Table(files, o.Images * Math.Max(1, o.MemoryFactor), work);

        long loaded = PeakMemory.CurrentBytes();
        PeakMemory.Trim();
        long trimmed = PeakMemory.CurrentBytes();
        // Warm-up over the whole set: JIT, ORT's arena, the image decoder's buffer pools and the GC's heap sizes
        // settle here, so the peaks below compare N with 10×N rather than a cold start with a warm one.
        pass.Run(table, null, ct);
        log($"resident: {loaded >> 20} MB after the intake, {trimmed >> 20} MB after trimming, {PeakMemory.CurrentBytes() >> 20} MB after a warm-up pass");

        PeakMemory.Reset();
        var first = Timed(o.Images, () => pass.Run(table, null, ct));
        long peakN = PeakMemory.PeakBytes();
        log($"whole pass at N={o.Images}: {first.ImagesPerSecond:0.0} images/s, peak {peakN >> 20} MB");
        PeakMemory.Reset();
        var wholeBig = Timed(big.Items.Count, () => pass.Run(big, null, ct));
        long peakBig = PeakMemory.PeakBytes();
        log($"whole pass at {big.Items.Count}: {wholeBig.ImagesPerSecond:0.0} images/s, peak {peakBig >> 20} MB");
        // N again: the decoder's pools and the GC's budgets keep growing for a few thousand images whatever N is,
        // so the first N run can sit below the plateau; this one shows whether anything is held for the larger set.
        PeakMemory.Reset();
        pass.Run(table, null, ct);
        long peakAgain = PeakMemory.PeakBytes();
        log($"whole pass at N={o.Images} again: peak {peakAgain >> 20} MB");

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
        DecodeAll(pass, files, tensors, opt.DecodeThreads);
        var (rawBytes, rawSource) = RawModel(o.ModelPath, model, opt.BatchSize);
        using var raw = new ModelRunner(model.Plan, rawBytes, model.Plan.Batch == BatchMode.ConcurrentSingle ? 1 : opt.InferenceThreads, opt.Spinning ?? false);
        RunRaw(raw, tensors, Math.Min(o.Images, opt.BatchSize * 2), slot, opt);
        pass.RunTensors(tensors, Math.Min(o.Images, opt.BatchSize * 2), null, ct);
        var rounds = new List<(PhaseRate Decode, PhaseRate Raw, PhaseRate Pass, PhaseRate Whole)>();
        var arch = o.TorchScript is null ? null : TorchBaseline.ArchitectureOf(o.ModelPath);
        var torchRuns = new List<(double Whole, double Ratio)>();
        string? torchNote = o.TorchScript is null ? null : arch is null ? "no eager-mode rebuild of this architecture" : null;
        for (int r = 0; r < Math.Max(1, o.Rounds); r++)
        {
            // Every phase once per round, back to back, so load from other processes hits them alike;
            // ratios are taken within a round and the median round is reported.
            var round = (
                Repeated(o.MinPhaseSeconds, o.Images, () => DecodeAll(pass, files, tensors, opt.DecodeThreads)),
                Repeated(o.MinPhaseSeconds, o.Images, () => RunRaw(raw, tensors, o.Images, slot, opt)),
                Repeated(o.MinPhaseSeconds, o.Images, () => pass.RunTensors(tensors, o.Images, null, ct)),
                Repeated(o.MinPhaseSeconds, o.Images, () => pass.Run(table, null, ct)));
            rounds.Add(round);
            log($"round {r + 1}: decode {round.Item1.ImagesPerSecond:0.0}, raw {round.Item2.ImagesPerSecond:0.0}, pass {round.Item3.ImagesPerSecond:0.0}, " +
                $"whole {round.Item4.ImagesPerSecond:0.0} images/s; load {BenchMachine.LoadAverage():0.0}");
            if (arch is not null)
            {
                // The script runs in its own process right after the round's whole pass, on the same files.
                var (ips, note) = TorchBaseline.Run(o.Python, o.TorchScript!, arch, Path.Combine(work, "images"), o.PhotoWidth, o.PhotoHeight, opt.InferenceThreads, opt.BatchSize, ct);
                torchNote = note;
                if (ips is { } t) torchRuns.Add((t, round.Item4.ImagesPerSecond / t));
                log($"round {r + 1}: eager-mode script {(ips is { } v ? $"{v:0.0} images/s" : "not run")} ({note})");
            }
            ct.ThrowIfCancellationRequested();
        }
        static double Bound(PhaseRate d, PhaseRate r) => 1 / (1 / d.ImagesPerSecond + 1 / r.ImagesPerSecond);
        var ratios = new Ratios(
            Median(rounds.Select(x => x.Pass.ImagesPerSecond / x.Raw.ImagesPerSecond)),
            Median(rounds.Select(x => x.Whole.ImagesPerSecond / x.Raw.ImagesPerSecond)),
            Median(rounds.Select(x => x.Whole.ImagesPerSecond / Bound(x.Decode, x.Raw))));
        var decode = MedianRate(rounds.Select(x => x.Decode));
        var rawRate = MedianRate(rounds.Select(x => x.Raw));
        var passRate = MedianRate(rounds.Select(x => x.Pass));
        var whole = MedianRate(rounds.Select(x => x.Whole));
        double bound = Median(rounds.Select(x => Bound(x.Decode, x.Raw)));
        return new BenchResult(
            Path.GetFileName(o.ModelPath), BenchMachine.Describe(withOs: true), Environment.ProcessorCount, o.Images, opt.BatchSize, opt.InferenceThreads, opt.DecodeThreads,
            model.Plan.Batch == BatchMode.Batched ? "batched" : "concurrent-single", units, $"{o.PhotoWidth}x{o.PhotoHeight}", rawSource,
            rawRate, passRate, whole, decode, bound, ratios, peakN, peakAgain, peakBig, big.Items.Count, wholeBig, resident,
            model.Plan.ClassCount * sizeof(float) + sizeof(int) + sizeof(bool), BenchMachine.LoadAverage(), rounds.Count)
        {
            TorchImagesPerSecond = torchRuns.Count == 0 ? null : Median(torchRuns.Select(x => x.Whole)),
            TorchRatio = torchRuns.Count == 0 ? null : Median(torchRuns.Select(x => x.Ratio)),
            TorchNote = torchNote,
        };
    }

    private static PhaseRate Timed(int images, Action run)
    {
        var cpu = Process.GetCurrentProcess().TotalProcessorTime;
        var clock = Stopwatch.StartNew();
        run();
        double s = clock.Elapsed.TotalSeconds;
        double cpuSeconds = (Process.GetCurrentProcess().TotalProcessorTime - cpu).TotalSeconds;
        return new PhaseRate(images / Math.Max(1e-9, s), s, cpuSeconds * 1000 / images);
    }

    private static double Median(IEnumerable<double> values)
    {
        var v = values.Order().ToArray();
        return v.Length == 0 ? double.NaN : v.Length % 2 == 1 ? v[v.Length / 2] : (v[v.Length / 2 - 1] + v[v.Length / 2]) / 2;
    }

    private static PhaseRate MedianRate(IEnumerable<PhaseRate> rates)
    {
        var v = rates.OrderBy(r => r.ImagesPerSecond).ToArray();
        return v[v.Length / 2];
    }

    /// <summary>Runs the whole set again until the phase's minimum time has passed, so fast models are timed long enough.</summary>
    private static PhaseRate Repeated(double minSeconds, int images, Action run)
    {
        var cpu = Process.GetCurrentProcess().TotalProcessorTime;
        var clock = Stopwatch.StartNew();
        int done = 0;
        do
        {
            run();
            done += images;
        }
        while (clock.Elapsed.TotalSeconds < minSeconds);
        double s = clock.Elapsed.TotalSeconds;
        double cpuSeconds = (Process.GetCurrentProcess().TotalProcessorTime - cpu).TotalSeconds;
        return new PhaseRate(done / s, s, cpuSeconds * 1000 / done);
    }

    private static void DecodeAll(ActivationPass pass, IReadOnlyList<string> files, float[] tensors, int threads)
    {
        var pre = pass.Preprocessor;
        int slot = pre.SlotLength;
        Parallel.For(0, files.Count, new ParallelOptions { MaxDegreeOfParallelism = threads }, i =>
        {
            using var image = pre.Load(files[i]);
            pre.Write(image, tensors.AsSpan((int)((long)i * slot), slot));
        });
    }

    /// <summary>
    /// The original model's bytes when they run at the pass's batch. A model whose batch is fixed at 1 but was
    /// freed by the intake runs as the original graph with only its batch dimension made symbolic.
    /// </summary>
    private static (byte[] Bytes, string Source) RawModel(string path, LoadedModel model, int batch)
    {
        var original = File.ReadAllBytes(path);
        if (model.Plan.Batch == BatchMode.ConcurrentSingle || batch == 1) return (original, "original model");
        var proto = Onnx.ModelProto.Parser.ParseFrom(original);
        var input = proto.Graph.Input.First(i => i.Name == model.Plan.InputName);
        var dims = input.Type?.TensorType?.Shape?.Dim;
        if (dims is not { Count: > 0 } || dims[0].DimValue <= 0) return (original, "original model");
        var freed = GraphRewriter.ExposeLayers(proto, model.Plan.InputName, model.Plan.OutputName, [], symbolicBatch: true);
        return (Google.Protobuf.MessageExtensions.ToByteArray(freed), "original model, batch dimension made symbolic");
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
}
