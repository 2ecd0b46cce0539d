namespace AuditSvc.Compute.Activations;

/// <summary>Settings of the activation pass; zero means "choose from the model and the machine".</summary>
public sealed record PassOptions
{
    public int BatchSize { get; init; }

    /// <summary>ONNX Runtime intra-op threads per session.</summary>
    public int InferenceThreads { get; init; }

    /// <summary>Threads decoding and preprocessing images while inference runs.</summary>
    public int DecodeThreads { get; init; }

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
    /// the bounded queue stops decoders running ahead, and with spinning off an idle side yields its core.
    /// </summary>
    public PassOptions Resolve(int slotFloats, int cores)
    {
        cores = Math.Max(1, cores);
        int batch = BatchSize > 0 ? BatchSize : Math.Clamp((int)BitOperations.RoundDownPowerOf2((uint)Math.Max(1, (2 << 20) / Math.Max(1, slotFloats))), 1, 64);
        return this with
        {
            BatchSize = batch,
            InferenceThreads = InferenceThreads > 0 ? InferenceThreads : cores,
            DecodeThreads = DecodeThreads > 0 ? DecodeThreads : cores,
            Spinning = Spinning ?? false,
            ReduceInGraph = ReduceInGraph ?? true,
        };
    }
}

file static class BitOperations
{
    public static uint RoundDownPowerOf2(uint v) => v == 0 ? 0 : 1u << (31 - System.Numerics.BitOperations.LeadingZeroCount(v));
}
