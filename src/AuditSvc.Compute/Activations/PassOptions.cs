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

    /// <summary>Concrete settings for a model whose input slot holds <paramref name="slotFloats"/> floats.</summary>
    public PassOptions Resolve(int slotFloats)
    {
        int cores = Environment.ProcessorCount;
        int batch = BatchSize > 0 ? BatchSize : Math.Clamp((int)BitOperations.RoundDownPowerOf2((uint)Math.Max(1, (2 << 20) / Math.Max(1, slotFloats))), 1, 64);
        return this with
        {
            BatchSize = batch,
            InferenceThreads = InferenceThreads > 0 ? InferenceThreads : cores,
            DecodeThreads = DecodeThreads > 0 ? DecodeThreads : Math.Max(1, cores),
        };
    }
}

file static class BitOperations
{
    public static uint RoundDownPowerOf2(uint v) => v == 0 ? 0 : 1u << (31 - System.Numerics.BitOperations.LeadingZeroCount(v));
}
