using System.Runtime.InteropServices;

namespace AuditSvc.Core.Statistics;

/// <summary>
/// 1-based mid-ranks (tied values share the mean of the ranks they occupy), as the Wilcoxon and
/// van Elteren tests use them, and the tie term Σ(t³ − t) over tie groups of size t that their
/// variance correction needs (Hollander &amp; Wolfe, Nonparametric Statistical Methods, 1973, §4.1).
/// </summary>
public static class MidRanks
{
    /// <summary>
    /// Writes the mid-rank of <paramref name="values"/>[i] to <paramref name="ranks"/>[i] and returns
    /// Σ(t³ − t). Allocates one index buffer; use the overload with <c>order</c> in loops.
    /// </summary>
    public static double Compute(ReadOnlySpan<float> values, Span<double> ranks)
    {
        int[] order = new int[values.Length];
        return Compute(values, ranks, order);
    }

    /// <summary>
    /// Allocation-free form: <paramref name="order"/> (length ≥ values.Length) is scratch and on return
    /// holds the indices of the values in ascending order. NaN values are rejected.
    /// </summary>
    public static double Compute(ReadOnlySpan<float> values, Span<double> ranks, Span<int> order)
    {
        int n = values.Length;
        if (ranks.Length < n) throw new ArgumentException("The rank buffer is shorter than the values.", nameof(ranks));
        if (order.Length < n) throw new ArgumentException("The order buffer is shorter than the values.", nameof(order));
        ranks = ranks[..n];
        order = order[..n];

        // The rank buffer doubles as the sort key: each 64-bit slot holds the value's bits, made to
        // order like the value, above its index. Sorting plain integers is several times faster than
        // sorting values with a separate index array, and needs no second buffer.
        Span<ulong> keys = MemoryMarshal.Cast<double, ulong>(ranks);
        for (int i = 0; i < n; i++)
        {
            float v = values[i];
            if (float.IsNaN(v)) throw new ArgumentException($"Value {i} is NaN; ranks need ordered values.", nameof(values));
            keys[i] = (ulong)OrderedBits(v) << 32 | (uint)i;
        }
        keys.Sort();

        // Sorted keys become the mid-rank of their sorted position, group by group.
        double tieTerm = 0;
        int start = 0;
        while (start < n)
        {
            uint value = (uint)(keys[start] >> 32);
            int end = start;
            while (end < n && (uint)(keys[end] >> 32) == value)
            {
                order[end] = (int)(uint)keys[end];
                end++;
            }
            double mid = 0.5 * (start + 1 + end);
            for (int k = start; k < end; k++) ranks[k] = mid;
            double t = end - start;
            tieTerm += t * t * t - t;
            start = end;
        }

        ScatterInPlace(ranks, order);
        return tieTerm;
    }

    // Float bits mapped so that unsigned comparison orders like the floats; −0 is folded into +0.
    private static uint OrderedBits(float v)
    {
        uint bits = BitConverter.SingleToUInt32Bits(v + 0f);
        return (bits & 0x8000_0000u) != 0 ? ~bits : bits | 0x8000_0000u;
    }

    // ranks[i] belongs at position order[i]: follow the permutation's cycles, marking visited
    // entries by complementing them, then restore order.
    private static void ScatterInPlace(Span<double> ranks, Span<int> order)
    {
        for (int i = 0; i < order.Length; i++)
        {
            if (order[i] < 0) continue;
            double carry = ranks[i];
            int cur = i;
            while (true)
            {
                int next = order[cur];
                order[cur] = ~next;
                double displaced = ranks[next];
                ranks[next] = carry;
                if (next == i) break;
                carry = displaced;
                cur = next;
            }
        }
        for (int i = 0; i < order.Length; i++) order[i] = ~order[i];
    }
}
