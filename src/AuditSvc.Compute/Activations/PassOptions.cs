namespace AuditSvc.Compute.Activations;

/// <summary>Settings of the activation pass; zero means "choose from the model and the machine".</summary>
public sealed record PassOptions
{
    public int BatchSize { get; init; }

    /// <summary>ONNX Runtime intra-op threads per session.</summary>
    public int InferenceThreads { get; init; }

    /// <summary>Threads decoding and preprocessing images while inference runs.</summary>
    public int DecodeThreads { get; init; }

    /// <summary>
    /// Most images decoded ahead of inference (decoded or being decoded, not yet run); 0 = choose. Counted in
    /// images, not batches, so a small batch does not stop the decoders from running ahead into the next ones.
    /// </summary>
    public int DecodeAheadImages { get; init; }

    /// <summary>Exemplars kept per unit; 0 = clamp(ceil(2% of images), 20, 250).</summary>
    public int TopN { get; init; }

    /// <summary>Scores matrix kept in memory up to this size, then spilled to <see cref="SpillDirectory"/>.</summary>
    public long ScoreMemoryLimitBytes { get; init; } = 512L << 20;

    public string? SpillDirectory { get; init; }

    /// <summary>
    /// Whether ONNX Runtime's threads spin while waiting for work. Null = choose: off, because decoding shares
    /// the cores and a spinning inference thread takes the time a decoder would use.
    /// </summary>
    public bool? Spinning { get; init; }

    /// <summary>
    /// Whether the channel maxima are computed inside the graph (<see cref="ReducedGraph"/>) rather than over the
    /// full activation maps handed out by ONNX Runtime (<see cref="LayerReduce"/>). Null = choose: in the graph.
    /// </summary>
    public bool? ReduceInGraph { get; init; }

    /// <summary>Concrete settings for a model whose input slot holds <paramref name="slotFloats"/> floats.</summary>
    public PassOptions Resolve(int slotFloats) => Resolve(slotFloats, Environment.ProcessorCount);

    /// <summary>
    /// Concrete settings on a machine with <paramref name="cores"/> cores. Batch: about 8 MB of input per run
    /// (a power of two, 1..64), enough to amortise a run's fixed cost without pushing activations out of cache
    /// for large inputs. Inference takes every core (ONNX Runtime's kernels scale with them) and so does decoding:
    /// the bound on images decoded ahead stops decoders running away, and with spinning off an idle side yields its
    /// core. Decode ahead: two batches, and at least four images per decode thread (so each decoder has work while
    /// a batch of one or two runs) as long as those take no more than 64 MB of input.
    /// </summary>
    public PassOptions Resolve(int slotFloats, int cores)
    {
        cores = Math.Max(1, cores);
        int batch = BatchSize > 0 ? BatchSize : Math.Clamp((int)BitOperations.RoundDownPowerOf2((uint)Math.Max(1, (2 << 20) / Math.Max(1, slotFloats))), 1, 64);
        int decode = DecodeThreads > 0 ? DecodeThreads : cores;
        long slotBytes = Math.Max(1L, slotFloats) * sizeof(float);
        int perThread = (int)Math.Clamp((64L << 20) / slotBytes, 1, 4L * decode);
        return this with
        {
            BatchSize = batch,
            InferenceThreads = InferenceThreads > 0 ? InferenceThreads : cores,
            DecodeThreads = decode,
            DecodeAheadImages = DecodeAheadImages > 0 ? DecodeAheadImages : Math.Max(2 * batch, perThread),
            Spinning = Spinning ?? false,
            ReduceInGraph = ReduceInGraph ?? true,
        };
    }
}

file static class BitOperations
{
    public static uint RoundDownPowerOf2(uint v) => v == 0 ? 0 : 1u << (31 - System.Numerics.BitOperations.LeadingZeroCount(v));
}
