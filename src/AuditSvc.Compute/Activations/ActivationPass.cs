using System.Diagnostics;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.Imaging;
using AuditSvc.Core.Activations;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;
using Microsoft.ML.OnnxRuntime;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Activations;

/// <summary>Progress of a pass: images done of the total, and the rate so far.</summary>
public readonly record struct PassProgress(int Done, int Total, double ImagesPerSecond);

/// <summary>
/// Pushes an image set through the model: decode and preprocess (on their own threads, image by image, a bounded
/// number of images ahead of inference), run ONNX Runtime, and reduce every read layer to unit scores and peaks on the fly. Keeps the
/// scores matrix, each unit's top-n and every image's prediction; no activation map outlives its batch.
/// </summary>
public sealed class ActivationPass : IDisposable
{
    private ModelPlan _plan;
    private int _singleRuns;
    private readonly object _settling = new();
    private readonly Lazy<ModelRunner> _runner;
    private readonly Lazy<ModelRunner> _fullRunner;
    private readonly Preprocessor _pre;
    private readonly IReadOnlyList<LayerSlice> _layers;
    private readonly int _units;
    private Image<Rgb24>?[]? _kept;
    private byte[]? _onnx;
    private bool _releaseOnBuild;

    public ActivationPass(ModelPlan plan, byte[] onnx, PassOptions options)
    {
        _plan = plan;
        _onnx = onnx;
        var single = plan.Batch == BatchMode.ConcurrentSingle;
        var probe = new Preprocessor(plan.Recipe);
        Options = options.Resolve(probe.SlotLength);
        int threads = single ? 1 : Options.InferenceThreads;
        _singleRuns = Options.InferenceThreads;
        bool inGraph = Options.ReduceInGraph ?? true;
        // Both sessions are made when first run: a merge reads only the layers and options, and runs neither; the
        // interventions read full maps of single units.
        _fullRunner = new Lazy<ModelRunner>(() => SettleBatch(new ModelRunner(plan, Source(), threads, Options.Spinning ?? false)));
        _runner = inGraph
            ? new Lazy<ModelRunner>(() => SettleBatch(new ModelRunner(plan, file =>
            {
                BeforeSessionBuild?.Invoke();
                WriteReduced(file);
                // Written: the runtime builds the session from the file, so the model's bytes can go before it does.
                if (_releaseOnBuild) ReleaseSource();
            }, threads, Options.Spinning ?? false, reduced: true)))
            : _fullRunner;
        // The recipe has one mean per input channel (the intake checks it against the graph's input).
        _pre = new Preprocessor(plan.Recipe) { Channels = plan.Recipe.Mean.Length };
        var slices = new List<LayerSlice>();
        int first = 0;
        foreach (var layer in plan.ReadLayers)
        {
            slices.Add(new LayerSlice(layer, first));
            first += layer.Channels;
        }
        _layers = slices;
        _units = first;
    }

    public PassOptions Options { get; }

    /// <summary>
    /// The model's plan as this pass runs it: the intake's, except that a batch the intake left unchecked
    /// (<see cref="ModelPlan.BatchUnchecked"/>) is settled once the first session is built.
    /// </summary>
    public ModelPlan Plan => _plan;

    /// <summary>A runner whose layer outputs are the full activation maps (for runs that read single units).</summary>
    public ModelRunner Runner => _fullRunner.Value;

    /// <summary>
    /// The pass's own runner, for runs that read only the class output: the graph whose predictions the pass recorded,
    /// and no second session to build.
    /// </summary>
    public ModelRunner ClassRunner => _runner.Value;

    public Preprocessor Preprocessor => _pre;

    public IReadOnlyList<LayerSlice> Layers => _layers;

    /// <summary>
    /// The fitted image of <paramref name="item"/> (input size, RGB) as the last <see cref="Run"/> decoded it, when that
    /// run kept its images; null otherwise. Owned by the pass: callers clone before editing and never dispose it.
    /// </summary>
    public Image<Rgb24>? Kept(int item) => _kept is { } k && (uint)item < (uint)k.Length ? k[item] : null;

    /// <summary>Runs the pass over items [start, start + count) of the table (the whole table by default).</summary>
    /// <param name="keepFittedBytes">When every image of the run fits in this many bytes at the input size, the decoded
    /// images are kept for later runs on edited copies (<see cref="Kept"/>), so that they are not decoded twice; else none is.</param>
    public ActivationResult Run(ItemTable table, IProgress<PassProgress>? progress, CancellationToken ct, int start = 0, int count = -1,
        long keepFittedBytes = 0)
    {
        if (count < 0) count = table.Items.Count - start;
        int n = table.Items.Count;
        ReleaseKept();
        if (count > 0 && (long)count * _pre.Recipe.Width * _pre.Recipe.Height * 3 <= keepFittedBytes) _kept = new Image<Rgb24>?[n];
        var sink = NewCollector(n, item => table.Items[item].RelativePath);
        int b = Options.BatchSize, slot = _pre.SlotLength;
        var clock = Stopwatch.StartNew();
        // While the session is still being built (PrepareInBackground), images that are kept anyway are decoded from the
        // last one back on the core the build leaves idle; the decoders below, coming from the first, then only convert them.
        using var early = _kept is not null && !_runner.IsValueCreated ? new EarlyDecodes(this, table, start, count, ct) : null;
        // Decoders work image by image, ahead into later batches, up to a bound in images (see DecodeAhead).
        using (var ahead = new DecodeAhead(count, b, Options.DecodeThreads, Options.DecodeAheadImages, () => new PassBatch(b, slot, _units),
            (j, batch, i) =>
            {
                var item = table.Items[start + j];
                batch.Items[i] = item.Index;
                if (early?.Take(j) is { } done) Fill(batch, i, done.Image, done.Error);
                else Decode(item.Path, batch, i);
            }, ct))
        {
            int done = 0;
            foreach (var batch in ahead.Batches())
            {
                InferAndCollect(batch, batch.Input.AsMemory(0, batch.Count * slot), sink);
                done += batch.Count;
                sink.Store.SpillIfNeeded(start + done);
                if (MemoryTrace.Enabled && done / 25_000 != (done - batch.Count) / 25_000) MemoryTrace.Mark($"activation run at {done} images, {sink.Store.SpilledBlocks} blocks spilled");
                progress?.Report(new PassProgress(done, count, done / Math.Max(1e-9, clock.Elapsed.TotalSeconds)));
            }
        }
        ct.ThrowIfCancellationRequested();
        return sink.Result(_layers);
    }

    /// <summary>
    /// Runs the pass on input tensors already decoded and preprocessed: <paramref name="images"/> NCHW slots of
    /// <see cref="Imaging.Preprocessor.SlotLength"/> floats each, item i in slot i. Model runs read the
    /// caller's memory in place; the reduce, top-n and scores matrix are those of <see cref="Run"/>.
    /// </summary>
    public ActivationResult RunTensors(Memory<float> inputs, int images, IProgress<PassProgress>? progress, CancellationToken ct)
    {
        int slot = _pre.SlotLength, b = Options.BatchSize;
        if (inputs.Length < (long)images * slot)
            throw new ArgumentException($"{images} images need {(long)images * slot} floats, got {inputs.Length}", nameof(inputs));
        var sink = NewCollector(images, item => $"tensor {item}");
        var batch = new PassBatch(b, 0, _units);
        var clock = Stopwatch.StartNew();
        for (int s = 0; s < images; s += b)
        {
            ct.ThrowIfCancellationRequested();
            batch.Count = Math.Min(b, images - s);
            for (int i = 0; i < batch.Count; i++) { batch.Items[i] = s + i; batch.Ok[i] = true; }
            InferAndCollect(batch, inputs.Slice(s * slot, batch.Count * slot), sink);
            sink.Store.SpillIfNeeded(s + batch.Count);
            progress?.Report(new PassProgress(s + batch.Count, images, (s + batch.Count) / Math.Max(1e-9, clock.Elapsed.TotalSeconds)));
        }
        return sink.Result(_layers);
    }

    private PassCollector NewCollector(int items, Func<int, string> fileOf) =>
        new(items, _units, _plan.ClassCount, Options.TopN > 0 ? Options.TopN : TopN.DefaultN(items), Options, fileOf);

    private void Decode(string path, PassBatch batch, int i)
    {
        var (image, error) = TryLoad(path);
        try
        {
            Fill(batch, i, image, error);
            if (image is not null && _kept is { } kept)
            {
                kept[batch.Items[i]] = image;
                image = null;
            }
        }
        finally
        {
            image?.Dispose();
        }
    }

    // The image fitted to the input, or why it could not be decoded.
    private (Image<Rgb24>? Image, string? Error) TryLoad(string path)
    {
        try
        {
            return (_pre.Load(path), null);
        }
        catch (Exception e) when (e is SixLabors.ImageSharp.ImageFormatException or IOException or NotSupportedException or UnauthorizedAccessException)
        {
            return (null, $"not decodable at pass time ({e.GetType().Name}: {e.Message.Split('\n')[0]})");
        }
    }

    // Slot i of the batch from a fitted image, or emptied and flagged with the reason the image failed.
    private void Fill(PassBatch batch, int i, Image<Rgb24>? image, string? error)
    {
        var dest = batch.Input.AsSpan(i * _pre.SlotLength, _pre.SlotLength);
        if (image is not null)
        {
            _pre.Write(image, dest);
            batch.Ok[i] = true;
            batch.Error[i] = null;
            return;
        }
        dest.Clear();
        batch.Ok[i] = false;
        batch.Error[i] = error;
    }

    /// <summary>
    /// One thread that decodes a run's images from the last one back while the pass's session is being built, into the
    /// kept images; it stops when the session is built, when it meets an image the forward decoders took, or at the
    /// first. Each image is claimed once, by it or by a forward decoder; a forward decoder that finds an image claimed
    /// here waits for it (at most the one being decoded).
    /// </summary>
    private sealed class EarlyDecodes : IDisposable
    {
        public sealed record Outcome(Image<Rgb24>? Image, string? Error);

        private const int Free = 0, Early = 1, Forward = 2;
        private readonly int[] _claim;
        private readonly Outcome?[] _done;
        private readonly Task _worker;
        private readonly CancellationTokenSource _stop;

        public EarlyDecodes(ActivationPass pass, ItemTable table, int start, int count, CancellationToken ct)
        {
            _claim = new int[count];
            _done = new Outcome?[count];
            _stop = CancellationTokenSource.CreateLinkedTokenSource(ct);
            var token = _stop.Token;
            pass._earlyDecoded = 0;
            pass._earlyStopped = false;
            _worker = Task.Factory.StartNew(() =>
            {
                try
                {
                    Decode(pass, table, start, count, token);
                }
                finally
                {
                    pass._earlyStopped = true;
                }
            }, CancellationToken.None, TaskCreationOptions.LongRunning, TaskScheduler.Default);
        }

        private void Decode(ActivationPass pass, ItemTable table, int start, int count, CancellationToken token)
        {
            for (int j = count - 1; j >= 0 && !token.IsCancellationRequested && !pass._runner.IsValueCreated; j--)
            {
                if (Interlocked.CompareExchange(ref _claim[j], Early, Free) != Free) return;
                var item = table.Items[start + j];
                Outcome result;
                try
                {
                    var (image, error) = pass.TryLoad(item.Path);
                    if (image is not null) pass._kept![item.Index] = image;
                    result = new Outcome(image, error);
                }
                catch (Exception)
                {
                    // Anything else is met again, and reported, by the forward decoder's own attempt.
                    result = new Outcome(null, null);
                }
                Volatile.Write(ref _done[j], result);
                Interlocked.Increment(ref pass._earlyDecoded);
            }
        }

        /// <summary>Null: the forward decoder decodes item <paramref name="j"/> itself; else what the early decoder made of it.</summary>
        public Outcome? Take(int j)
        {
            if (Interlocked.CompareExchange(ref _claim[j], Forward, Free) == Free) return null;
            var spin = new SpinWait();
            Outcome? done;
            while ((done = Volatile.Read(ref _done[j])) is null) spin.SpinOnce();
            return done.Image is null && done.Error is null ? null : done;
        }

        public void Dispose()
        {
            _stop.Cancel();
            try { _worker.Wait(); } catch (AggregateException) { }
            _stop.Dispose();
        }
    }

    private void InferAndCollect(PassBatch batch, Memory<float> input, PassCollector sink)
    {
        int slot = _pre.SlotLength;
        var probs = sink.Probabilities;
        // The runner first: building it settles a batch the intake left unchecked.
        var runner = _runner.Value;
        if (_plan.Batch == BatchMode.ConcurrentSingle)
            Parallel.For(0, batch.Count, new ParallelOptions { MaxDegreeOfParallelism = _singleRuns }, i =>
                runner.Run(input.Slice(i * slot, slot), 1, (cls, layers) => Reduce(batch, i, 1, cls, layers, probs, parallel: false)));
        else
            runner.Run(input, batch.Count, (cls, layers) => Reduce(batch, 0, batch.Count, cls, layers, probs, Options.InferenceThreads > 1));
        sink.Collect(batch);
    }

    /// <summary>Unit scores and peaks of images [offset, offset + count) of a batch, and their class probabilities.</summary>
    private void Reduce(PassBatch batch, int offset, int count, ReadOnlySpan<float> cls, IReadOnlyList<OrtValue> layers, float[] probs, bool parallel)
    {
        int k = _plan.ClassCount;
        for (int i = 0; i < count; i++)
        {
            var dest = probs.AsSpan((int)((long)batch.Items[offset + i] * k), k);
            cls.Slice(i * k, k).CopyTo(dest);
            if (!_plan.OutputIsProbabilities) Softmax(dest);
        }
        if (_runner.Value.Reduced)
        {
            int o = 0;
            foreach (var slice in _layers)
            {
                if (slice.Layer.Rank == 4)
                {
                    LayerReduce.FromGraph(slice, layers[o], layers[o + 1], count, offset, _units, batch.Scores, batch.PeakY, batch.PeakX);
                    o += 2;
                }
                else LayerReduce.Run(slice, layers[o++], count, offset, _units, batch.Scores, batch.PeakY, batch.PeakX, parallel: false);
            }
            return;
        }
        for (int l = 0; l < _layers.Count; l++)
            LayerReduce.Run(_layers[l], layers[l], count, offset, _units, batch.Scores, batch.PeakY, batch.PeakX, parallel);
    }

    // A batch the intake freed unchecked is tested on the first session built, which is the pass's own: cheaper than
    // the intake's two unoptimised sessions, and a test of the graph that will run. Failing it, the same session runs one
    // image at a time (at batch 1 it computes what the file's graph does); its threads were sized for batches, so the
    // single runs go one after another instead of side by side.
    private ModelRunner SettleBatch(ModelRunner runner)
    {
        lock (_settling)
        {
            if (!_plan.BatchUnchecked) return runner;
            bool free = BatchRuns.Agree(runner);
            _plan = _plan with { BatchUnchecked = false, Batch = free ? BatchMode.Batched : BatchMode.ConcurrentSingle };
            if (!free) _singleRuns = 1;
            return runner;
        }
    }

    public static void Softmax(Span<float> v)
    {
        float max = float.NegativeInfinity;
        foreach (var x in v) if (x > max) max = x;
        float sum = 0;
        for (int i = 0; i < v.Length; i++) { v[i] = MathF.Exp(v[i] - max); sum += v[i]; }
        for (int i = 0; i < v.Length; i++) v[i] /= sum;
    }

    /// <summary>Frees the images the last run kept.</summary>
    public void ReleaseKept()
    {
        if (_kept is null) return;
        foreach (var image in _kept) image?.Dispose();
        _kept = null;
    }

    /// <summary>Builds the pass's session now rather than at the first run (to measure it, or to fail early).</summary>
    /// <param name="releaseModelBytes">Let go of the rewritten model's bytes once the session's file is written, before the
    /// runtime builds from it (the caller must hold no other reference): they are not needed again unless full maps are
    /// asked for, which such a pass then refuses. The command line's audit does this; the service's chunks do not.</param>
    public void Prepare(bool releaseModelBytes = false)
    {
        _releaseOnBuild = releaseModelBytes;
        _ = _runner.Value;
        if (releaseModelBytes) ReleaseSource();
    }

    /// <summary>
    /// <see cref="Prepare"/> on another thread, so that a <see cref="Run"/> started meanwhile decodes its first images
    /// while the session is built; the run waits for the session before its first batch. The returned task ends when the
    /// session is built (faulted if it could not be).
    /// </summary>
    public Task PrepareInBackground(bool releaseModelBytes = false)
    {
        // Set before the thread starts: a run that reaches the session first builds it the same way.
        _releaseOnBuild = releaseModelBytes;
        return Task.Run(() =>
        {
            Prepare(releaseModelBytes);
            MemoryTrace.Mark("pass session built");
        });
    }

    // Its own frame, so that no stack slot of the caller still holds the bytes when they are let go.
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.NoInlining)]
    private void WriteReduced(Stream file) => ReducedGraph.Write(Source(), _plan.ReadLayers, file);

    private byte[] Source() => _onnx ?? throw new InvalidOperationException(
        "this pass let go of the model's bytes once its session was built (Prepare(releaseModelBytes: true)): it cannot build a session that reads full maps");

    private void ReleaseSource()
    {
        if (_onnx is null) return;
        _onnx = null;
        // A large array: it goes only with a full collection, which the runtime's optimiser is about to need the room of.
        Models.OrtRunner.ReleaseTransient();
    }

    /// <summary>Tests: runs as the pass's session starts to be built (to hold the build back).</summary>
    internal Action? BeforeSessionBuild { get; set; }

    /// <summary>Tests: images the last run decoded while its session was being built, and whether that decoder has stopped.</summary>
    internal (int Decoded, bool Stopped) Early => (_earlyDecoded, _earlyStopped);

    private int _earlyDecoded;
    private volatile bool _earlyStopped;

    /// <summary>Which sessions exist: the pass's (in-graph maxima, or full maps when it reads them) and the full maps'.</summary>
    internal (bool Pass, bool FullMaps) SessionsBuilt => (_runner.IsValueCreated, _fullRunner.IsValueCreated);

    public void Dispose()
    {
        ReleaseKept();
        if (_runner.IsValueCreated && _runner != _fullRunner) _runner.Value.Dispose();
        if (_fullRunner.IsValueCreated) _fullRunner.Value.Dispose();
    }
}
