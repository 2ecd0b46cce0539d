using System.Diagnostics;
using System.Threading.Channels;
using AuditSvc.Compute.Imaging;
using AuditSvc.Core.Activations;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Models;
using Microsoft.ML.OnnxRuntime;

namespace AuditSvc.Compute.Activations;

/// <summary>Progress of a pass: images done of the total, and the rate so far.</summary>
public readonly record struct PassProgress(int Done, int Total, double ImagesPerSecond);

/// <summary>
/// Pushes an image set through the model: decode and preprocess (on their own threads, a bounded queue ahead of
/// inference), run ONNX Runtime, and reduce every read layer to unit scores and peaks on the fly. Keeps the
/// scores matrix, each unit's top-n and every image's prediction; no activation map outlives its batch.
/// </summary>
public sealed class ActivationPass : IDisposable
{
    private readonly ModelRunner _runner;
    private readonly Preprocessor _pre;
    private readonly IReadOnlyList<LayerSlice> _layers;
    private readonly int _units;

    public ActivationPass(ModelPlan plan, byte[] onnx, PassOptions options)
    {
        var single = plan.Batch == BatchMode.ConcurrentSingle;
        var probe = new Preprocessor(plan.Recipe);
        Options = options.Resolve(probe.SlotLength);
        _runner = new ModelRunner(plan, onnx, single ? 1 : Options.InferenceThreads);
        _pre = new Preprocessor(plan.Recipe) { Channels = _runner.Channels };
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

    public ModelRunner Runner => _runner;

    public Preprocessor Preprocessor => _pre;

    public IReadOnlyList<LayerSlice> Layers => _layers;

    private sealed class Batch(int capacity, int slot, int units)
    {
        public readonly float[] Input = new float[capacity * slot];
        public readonly int[] Items = new int[capacity];
        public readonly bool[] Ok = new bool[capacity];
        public readonly string?[] Error = new string?[capacity];
        public readonly float[] Scores = new float[capacity * units];
        public readonly short[] PeakY = new short[capacity * units];
        public readonly short[] PeakX = new short[capacity * units];
        public int Count;
    }

    /// <summary>Runs the pass over items [start, start + count) of the table (the whole table by default).</summary>
    public ActivationResult Run(ItemTable table, IProgress<PassProgress>? progress, CancellationToken ct, int start = 0, int count = -1)
    {
        if (count < 0) count = table.Items.Count - start;
        int n = table.Items.Count, k = _runner.Plan.ClassCount;
        int topN = Options.TopN > 0 ? Options.TopN : TopN.DefaultN(n);
        var store = new ScoreStore(n, _units, memoryLimitBytes: Options.ScoreMemoryLimitBytes, spillDir: Options.SpillDirectory);
        var top = new TopN(_units, topN);
        var scored = new bool[n];
        var predicted = Enumerable.Repeat(-1, n).ToArray();
        var probs = new float[(long)n * k];
        var problems = new List<PassProblem>();
        int b = Options.BatchSize, slot = _pre.SlotLength;
        var queue = Channel.CreateBounded<Batch>(new BoundedChannelOptions(2) { SingleReader = true, SingleWriter = true });
        var free = Channel.CreateUnbounded<Batch>();
        for (int i = 0; i < 4; i++) free.Writer.TryWrite(new Batch(b, slot, _units));
        var clock = Stopwatch.StartNew();
        using var cts = CancellationTokenSource.CreateLinkedTokenSource(ct);
        var producer = Task.Run(async () =>
        {
            try
            {
                for (int s = start; s < start + count; s += b)
                {
                    var batch = await free.Reader.ReadAsync(cts.Token);
                    batch.Count = Math.Min(b, start + count - s);
                    int s0 = s;
                    Parallel.For(0, batch.Count, new ParallelOptions { MaxDegreeOfParallelism = Options.DecodeThreads, CancellationToken = cts.Token }, i =>
                    {
                        var item = table.Items[s0 + i];
                        batch.Items[i] = item.Index;
                        var dest = batch.Input.AsSpan(i * slot, slot);
                        try
                        {
                            using var image = _pre.Load(item.Path);
                            _pre.Write(image, dest);
                            batch.Ok[i] = true;
                            batch.Error[i] = null;
                        }
                        catch (Exception e) when (e is SixLabors.ImageSharp.UnknownImageFormatException or SixLabors.ImageSharp.InvalidImageContentException or IOException or NotSupportedException or UnauthorizedAccessException)
                        {
                            dest.Clear();
                            batch.Ok[i] = false;
                            batch.Error[i] = $"not decodable at pass time ({e.GetType().Name}: {e.Message.Split('\n')[0]})";
                        }
                    });
                    await queue.Writer.WriteAsync(batch, cts.Token);
                }
                queue.Writer.Complete();
            }
            catch (Exception e)
            {
                queue.Writer.Complete(e);
            }
        }, cts.Token);

        int done = 0;
        try
        {
            foreach (var batch in ReadAll(queue.Reader, cts.Token))
            {
                Infer(batch);
                for (int i = 0; i < batch.Count; i++)
                {
                    int item = batch.Items[i];
                    if (!batch.Ok[i])
                    {
                        problems.Add(new PassProblem(item, table.Items[item].RelativePath, batch.Error[i]!));
                        continue;
                    }
                    scored[item] = true;
                    var row = batch.Scores.AsSpan(i * _units, _units);
                    store.WriteRow(item, row);
                    for (int u = 0; u < _units; u++)
                        if (row[u] >= top.Threshold(u))
                            top.Offer(u, new Peak(item, row[u], batch.PeakY[i * _units + u], batch.PeakX[i * _units + u]));
                    var p = probs.AsSpan(item * k, k);
                    int best = 0;
                    for (int c = 1; c < k; c++) if (p[c] > p[best]) best = c;
                    predicted[item] = best;
                }
                done += batch.Count;
                store.SpillIfNeeded(start + done);
                progress?.Report(new PassProgress(done, count, done / Math.Max(1e-9, clock.Elapsed.TotalSeconds)));
                free.Writer.TryWrite(batch);

                void Infer(Batch bt)
                {
                    if (_runner.Plan.Batch == BatchMode.ConcurrentSingle)
                        Parallel.For(0, bt.Count, new ParallelOptions { MaxDegreeOfParallelism = Options.InferenceThreads }, i =>
                            _runner.Run(bt.Input.AsMemory(i * slot, slot), 1, (cls, layers) => Reduce(bt, i, 1, cls, layers, probs)));
                    else
                        _runner.Run(bt.Input.AsMemory(0, bt.Count * slot), bt.Count, (cls, layers) => Reduce(bt, 0, bt.Count, cls, layers, probs));
                }
            }
        }
        finally
        {
            cts.Cancel();
            try { producer.Wait(CancellationToken.None); } catch (AggregateException) { }
        }
        ct.ThrowIfCancellationRequested();
        return new ActivationResult(_layers, store, top, scored, predicted, probs, k, problems);
    }

    private static IEnumerable<Batch> ReadAll(ChannelReader<Batch> reader, CancellationToken ct)
    {
        while (reader.WaitToReadAsync(ct).AsTask().GetAwaiter().GetResult())
            while (reader.TryRead(out var batch)) yield return batch;
    }

    /// <summary>Unit scores and peaks of images [offset, offset + count) of a batch, and their class probabilities.</summary>
    private void Reduce(Batch batch, int offset, int count, ReadOnlySpan<float> cls, IReadOnlyList<OrtValue> layers, float[] probs)
    {
        int k = _runner.Plan.ClassCount;
        for (int i = 0; i < count; i++)
        {
            var dest = probs.AsSpan(batch.Items[offset + i] * k, k);
            cls.Slice(i * k, k).CopyTo(dest);
            if (!_runner.Plan.OutputIsProbabilities) Softmax(dest);
        }
        for (int l = 0; l < _layers.Count; l++)
        {
            var info = _layers[l].Layer;
            var data = layers[l].GetTensorDataAsSpan<float>();
            int c = info.Channels, plane = data.Length / (count * c), w = info.Rank == 2 ? 1 : info.Width;
            for (int i = 0; i < count; i++)
            {
                int rowBase = (offset + i) * _units + _layers[l].FirstUnit;
                for (int ch = 0; ch < c; ch++)
                {
                    var (max, index) = ChannelMax.Find(data.Slice((i * c + ch) * plane, plane));
                    batch.Scores[rowBase + ch] = max;
                    batch.PeakY[rowBase + ch] = (short)(index / w);
                    batch.PeakX[rowBase + ch] = (short)(index % w);
                }
            }
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

    public void Dispose() => _runner.Dispose();
}
