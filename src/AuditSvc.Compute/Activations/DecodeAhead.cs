using System.Runtime.ExceptionServices;

namespace AuditSvc.Compute.Activations;

/// <summary>
/// Decodes a run of items into a ring of batch buffers on its own threads, one image at a time, so that the batch
/// size does not cap decode parallelism: with batch 1 (large inputs, fixed-batch models) every decoder still works
/// on its own image, running ahead into the next batches. At most <c>ahead</c> images are claimed by decoders and
/// not yet handed back by the consumer, so memory is bounded in images, whatever the batch size.
/// Batches come out in item order; a batch's buffer is reused once the consumer has moved past it.
/// </summary>
internal sealed class DecodeAhead : IDisposable
{
    private readonly int _count;
    private readonly int _batch;
    private readonly PassBatch[] _ring;
    private readonly int[] _remaining;
    private readonly SemaphoreSlim[] _ready;
    private readonly SemaphoreSlim _room;
    private readonly Action<int, PassBatch, int> _decode;
    private readonly CancellationTokenSource _cts;
    private readonly Task[] _workers;
    private ExceptionDispatchInfo? _failure;
    private int _next = -1;

    /// <param name="count">Items in the run; item j (0-based within the run) goes to batch j / batchSize, slot j % batchSize.</param>
    /// <param name="ahead">Most images decoded or being decoded and not yet released by the consumer (at least one batch).</param>
    /// <param name="newBatch">Makes one buffer of the ring.</param>
    /// <param name="decode">Decodes item j of the run into slot i of the batch (sets its item, flag and error).</param>
    public DecodeAhead(int count, int batchSize, int threads, int ahead, Func<PassBatch> newBatch, Action<int, PassBatch, int> decode, CancellationToken ct)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(batchSize);
        _count = count;
        _batch = batchSize;
        ahead = Math.Max(ahead, batchSize);
        Ahead = ahead;
        // Decoders hold at most `ahead` unreleased images, and released images are whole batches in order, so a
        // decoder on batch k finds batch k - ring released once ring × batch ≥ ahead.
        int batches = (count + batchSize - 1) / batchSize;
        int ring = Math.Max(1, Math.Min(batches, (ahead + batchSize - 1) / batchSize));
        _ring = new PassBatch[ring];
        _remaining = new int[ring];
        _ready = new SemaphoreSlim[ring];
        for (int r = 0; r < ring; r++)
        {
            _ring[r] = newBatch();
            _ready[r] = new SemaphoreSlim(0);
            Arm(r);
        }
        _room = new SemaphoreSlim(ahead);
        _decode = decode;
        _cts = CancellationTokenSource.CreateLinkedTokenSource(ct);
        _workers = new Task[Math.Max(1, Math.Min(threads, Math.Max(1, count)))];
        for (int t = 0; t < _workers.Length; t++)
            _workers[t] = Task.Factory.StartNew(Work, CancellationToken.None, TaskCreationOptions.LongRunning, TaskScheduler.Default);
    }

    /// <summary>The bound on images decoded ahead of the consumer.</summary>
    public int Ahead { get; }

    /// <summary>Buffers in the ring.</summary>
    public int RingSize => _ring.Length;

    /// <summary>
    /// The batches in order, each once all its images are decoded. A batch stays the consumer's until it asks for
    /// the next one; then its buffer goes back to the decoders.
    /// </summary>
    public IEnumerable<PassBatch> Batches()
    {
        int batches = (_count + _batch - 1) / _batch;
        for (int k = 0; k < batches; k++)
        {
            int r = k % _ring.Length;
            try
            {
                _ready[r].Wait(_cts.Token);
            }
            catch (OperationCanceledException) when (_failure is not null)
            {
                _failure.Throw();
            }
            var batch = _ring[r];
            yield return batch;
            int released = batch.Count;
            Arm(r, k + _ring.Length);
            _room.Release(released);
        }
    }

    private void Arm(int r, int k = -1)
    {
        if (k < 0) k = r;
        int size = Math.Max(0, Math.Min(_batch, _count - k * _batch));
        _ring[r].Count = size;
        Volatile.Write(ref _remaining[r], size);
    }

    private void Work()
    {
        try
        {
            while (true)
            {
                _room.Wait(_cts.Token);
                int j = Interlocked.Increment(ref _next);
                if (j >= _count)
                {
                    _room.Release();
                    return;
                }
                int r = j / _batch % _ring.Length;
                _decode(j, _ring[r], j % _batch);
                if (Interlocked.Decrement(ref _remaining[r]) == 0) _ready[r].Release();
            }
        }
        catch (OperationCanceledException) when (_cts.IsCancellationRequested)
        {
        }
        catch (Exception e)
        {
            Interlocked.CompareExchange(ref _failure, ExceptionDispatchInfo.Capture(e), null);
            _cts.Cancel();
        }
    }

    public void Dispose()
    {
        _cts.Cancel();
        try { Task.WaitAll(_workers); } catch (AggregateException) { }
        foreach (var s in _ready) s.Dispose();
        _room.Dispose();
        _cts.Dispose();
    }
}
