namespace AuditSvc.Core.Models;

/// <summary>How a layer's tensor holds its units and places.</summary>
public enum LayerLayout
{
    /// <summary>[N, C, H, W]: channels first (the usual convolution layout).</summary>
    ChannelsFirst,
    /// <summary>[N, H, W, C]: channels last, as inside blocks that permute to apply LayerNorm and dense layers per place.</summary>
    ChannelsLast,
    /// <summary>[N, T, C]: tokens; after <see cref="LayerInfo.PrefixTokens"/> leading tokens (class, distillation), token
    /// t is place (t / W, t % W) of the patch grid.</summary>
    Tokens,
    /// <summary>[N, C]: one value per unit for the whole image.</summary>
    Vector,
}

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
    bool IsDefault)
{
    /// <summary>How the tensor holds units and places (rank-4 layers are channels-first unless told).</summary>
    public LayerLayout Layout { get; init; } = Rank == 2 ? LayerLayout.Vector : LayerLayout.ChannelsFirst;

    /// <summary>Leading tokens that are not places on the grid (a class token), for <see cref="LayerLayout.Tokens"/>.</summary>
    public int PrefixTokens { get; init; }

    /// <summary>The node merges two image paths (a residual addition, a multi-branch concatenation): a block's output.</summary>
    public bool MergesPaths { get; init; }

    /// <summary>The tensor is an activation's output, including ones exported as several nodes (SiLU as x·σ(x), GELU through Erf).</summary>
    public bool IsActivation { get; init; }

    /// <summary>
    /// The tensor the pass reads: the layer itself when it is [N,C,H,W] or [N,C], else a channels-first view of it
    /// [N,C,H,W] that the graph rewrite adds (prefix tokens dropped), so every later step sees one layout.
    /// </summary>
    public string ReadName => Layout is LayerLayout.ChannelsFirst or LayerLayout.Vector ? Name : "auditsvc_view_" + Name;

    /// <summary>Why a crop of this layer's peak is where it is, in words.</summary>
    public string PlaceNote => Layout switch
    {
        _ when Rank == 2 || Height * Width == 1 => "one value for the whole image",
        LayerLayout.Tokens when Field.Global => "token on the patch grid; the crop is the token's patch, but attention makes its true receptive field the whole image",
        LayerLayout.Tokens => "token on the patch grid, before any attention: the crop is the token's patch",
        _ when Field.Global => "the crop is the local path's receptive field; a global path (squeeze-excitation, pooled context) also feeds it, so its true field is the whole image",
        _ => "receptive field of the peak position",
    };
}

/// <summary>A float tensor of the graph that is not read, and why (shown by `inspect`).</summary>
public sealed record SkippedTensor(string Name, string Node, string OpType, IReadOnlyList<long> Shape, string Reason);

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
    /// <summary>
    /// The file fixes the batch at 1 and the intake freed it without checking (<c>ModelLoadOptions.BatchCheckOnPass</c>):
    /// the activation pass checks it on its own session before its first run and falls back to
    /// <see cref="BatchMode.ConcurrentSingle"/> when a batch does not give what its images give one at a time.
    /// </summary>
    public bool BatchUnchecked { get; init; }

    /// <summary>The layers the audit reads (the defaults unless overridden).</summary>
    public IReadOnlyList<LayerInfo> ReadLayers { get; init; } = [];

    /// <summary>What the intake changed or assumed about the model (channels-last input, in-graph normalisation,
    /// a single-output binary classifier read as two classes), in words for `inspect`, audit.json and the report.</summary>
    public IReadOnlyList<string> Notes { get; init; } = [];

    /// <summary>Float tensors of rank 3 or more that cannot be read as layers, with the reason.</summary>
    public IReadOnlyList<SkippedTensor> Skipped { get; init; } = [];

    public IReadOnlyList<string> ClassNames =>
        Recipe.ClassNames ?? Enumerable.Range(0, ClassCount).Select(i => i.ToString(System.Globalization.CultureInfo.InvariantCulture)).ToArray();
}
