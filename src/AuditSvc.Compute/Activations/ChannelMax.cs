using System.Numerics;

namespace AuditSvc.Compute.Activations;

/// <summary>
/// Maximum and arg-max of one channel's H×W plane: the unit score and its peak. The vector version finds the
/// maximum with SIMD lanes, then the first index holding it; <see cref="Reference"/> is the plain loop it is
/// tested against. NaN is treated as lower than every number so a broken activation never wins.
/// </summary>
public static class ChannelMax
{
    public static (float Max, int Index) Find(ReadOnlySpan<float> plane)
    {
        if (!Vector.IsHardwareAccelerated || plane.Length < Vector<float>.Count * 2) return Reference(plane);
        var best = new Vector<float>(float.NegativeInfinity);
        int i = 0, last = plane.Length - Vector<float>.Count;
        for (; i <= last; i += Vector<float>.Count)
        {
            var v = new Vector<float>(plane.Slice(i));
            // NaN compares false, so Max keeps the other operand only if we select explicitly.
            best = Vector.ConditionalSelect(Vector.GreaterThan(v, best), v, best);
        }
        float max = float.NegativeInfinity;
        for (int k = 0; k < Vector<float>.Count; k++) if (best[k] > max) max = best[k];
        for (; i < plane.Length; i++) if (plane[i] > max) max = plane[i];
        if (float.IsNegativeInfinity(max)) return Reference(plane);
        int index = plane.IndexOf(max);
        return (max, index);
    }

    public static (float Max, int Index) Reference(ReadOnlySpan<float> plane)
    {
        float max = float.NegativeInfinity;
        int index = 0;
        for (int i = 0; i < plane.Length; i++)
            if (plane[i] > max) { max = plane[i]; index = i; }
        if (float.IsNegativeInfinity(max) && plane.Length > 0 && float.IsNaN(plane[0])) return (float.NaN, 0);
        return (max, index);
    }
}
