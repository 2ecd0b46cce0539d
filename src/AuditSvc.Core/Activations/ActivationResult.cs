using AuditSvc.Core.Models;

namespace AuditSvc.Core.Activations;

/// <summary>Where a layer's units sit among all read units.</summary>
public sealed record LayerSlice(LayerInfo Layer, int FirstUnit)
{
    public int Count => Layer.Channels;
}

/// <summary>A problem met while pushing an image through the model (the image is skipped, not fatal).</summary>
public sealed record PassProblem(int Item, string File, string Reason);

/// <summary>
/// What the activation pass produced over the whole image set: per-unit scores for every image, each unit's
/// top-n peaks, and every image's prediction and class probabilities.
/// </summary>
/// <param name="Scored">Per item: true when it went through the model.</param>
/// <param name="Predicted">Per item: arg-max class (-1 when not scored).</param>
/// <param name="Probabilities">Items × classes, row-major.</param>
public sealed record ActivationResult(
    IReadOnlyList<LayerSlice> Layers,
    IUnitScores Scores,
    TopN Top,
    bool[] Scored,
    int[] Predicted,
    float[] Probabilities,
    int ClassCount,
    IReadOnlyList<PassProblem> Problems)
{
    public int UnitCount => Layers.Count == 0 ? 0 : Layers[^1].FirstUnit + Layers[^1].Count;

    /// <summary>The layer and channel of a global unit index.</summary>
    public (LayerSlice Layer, int Channel) Locate(int unit)
    {
        foreach (var l in Layers)
            if (unit >= l.FirstUnit && unit < l.FirstUnit + l.Count) return (l, unit - l.FirstUnit);
        throw new ArgumentOutOfRangeException(nameof(unit));
    }
}
