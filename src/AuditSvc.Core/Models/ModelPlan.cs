namespace AuditSvc.Core.Models;

/// <summary>One readable intermediate tensor of the model.</summary>
/// <param name="Name">The tensor's name in the graph (what --layers takes).</param>
/// <param name="OpType">The operator that produces it (Relu, Conv, GlobalAveragePool, Gemm ...).</param>
/// <param name="Channels">Units in the layer (C).</param>
/// <param name="Height">Spatial height (1 for rank-2 layers).</param>
/// <param name="Width">Spatial width (1 for rank-2 layers).</param>
/// <param name="Rank">4 for [N,C,H,W], 2 for [N,C].</param>
/// <param name="Field">Receptive field of one position; for rank-2 layers the whole input.</param>
/// <param name="IsDefault">Chosen when the user names no layers.</param>
public sealed record LayerInfo(
    string Name,
    string OpType,
    int Channels,
    int Height,
    int Width,
    int Rank,
    ReceptiveField Field,
    bool IsDefault);

/// <summary>How batches reach ONNX Runtime.</summary>
public enum BatchMode
{
    /// <summary>The batch dimension is symbolic (or was made so after a check): one run per batch.</summary>
    Batched,
    /// <summary>The batch dimension is fixed at 1 and could not be freed: concurrent batch-1 runs.</summary>
    ConcurrentSingle,
}

/// <summary>What the model intake learned about a model.</summary>
/// <param name="OutputName">The class-score output (logits, or probabilities when the graph ends in Softmax).</param>
/// <param name="Layers">Every candidate layer of the graph, in topological order.</param>
public sealed record ModelPlan(
    string ModelPath,
    string Sha256,
    string InputName,
    string OutputName,
    int ClassCount,
    InputRecipe Recipe,
    IReadOnlyList<LayerInfo> Layers,
    BatchMode Batch,
    bool OutputIsProbabilities)
{
    /// <summary>The layers the audit reads (the defaults unless overridden).</summary>
    public IReadOnlyList<LayerInfo> ReadLayers { get; init; } = [];

    public IReadOnlyList<string> ClassNames =>
        Recipe.ClassNames ?? Enumerable.Range(0, ClassCount).Select(i => i.ToString(System.Globalization.CultureInfo.InvariantCulture)).ToArray();
}
