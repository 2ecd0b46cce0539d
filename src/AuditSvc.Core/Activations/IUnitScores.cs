namespace AuditSvc.Core.Activations;

/// <summary>
/// The scores matrix (images × units) as the analysis reads it: a block of units at a time, every image.
/// Implementations may keep it in memory or stream it from chunk files on disk.
/// </summary>
public interface IUnitScores
{
    int ItemCount { get; }

    int UnitCount { get; }

    /// <summary>
    /// Copies the scores of units [firstUnit, firstUnit + count) into <paramref name="destination"/>, unit-major:
    /// destination[k * ItemCount + item] is unit (firstUnit + k)'s score on item. NaN marks an item that was not scored.
    /// </summary>
    void ReadUnits(int firstUnit, int count, Span<float> destination);
}
