namespace AuditSvc.Core.Activations;

/// <summary>One image's score on a unit and where in the layer's grid the maximum sat.</summary>
/// <param name="Item">Index of the image in the item table.</param>
/// <param name="Score">The unit score: spatial maximum of the channel.</param>
/// <param name="Y">Row of the maximum in the layer's grid (0 for rank-2 layers).</param>
/// <param name="X">Column of the maximum in the layer's grid (0 for rank-2 layers).</param>
public readonly record struct Peak(int Item, float Score, short Y, short X)
{
    /// <summary>
    /// Total order used everywhere exemplars are ranked: higher score first, then lower item index.
    /// The tie-break makes top-n independent of how the items were split into chunks.
    /// </summary>
    public static bool Better(in Peak a, in Peak b) =>
        a.Score > b.Score || (a.Score == b.Score && a.Item < b.Item) || (float.IsNaN(b.Score) && !float.IsNaN(a.Score));
}
