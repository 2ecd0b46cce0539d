namespace AuditSvc.Core.Activations;

/// <summary>
/// The n best peaks of every unit, kept as one bounded min-heap per unit in a single flat array
/// (no per-offer allocation). Exactly mergeable: merging the trackers of disjoint chunks gives the same
/// result as one tracker over all items, because <see cref="Peak.Better"/> is a total order.
/// </summary>
public sealed class TopN
{
    private readonly Peak[] _heap;
    private readonly int[] _count;

    public TopN(int units, int n)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(n);
        Units = units;
        N = n;
        _heap = new Peak[(long)units * n is var size && size <= int.MaxValue ? (int)size : throw new ArgumentOutOfRangeException(nameof(units))];
        _count = new int[units];
    }

    public int Units { get; }

    public int N { get; }

    /// <summary>The DESIGN default: n = clamp(ceil(2% of items), 20, 250).</summary>
    public static int DefaultN(int items) => Math.Clamp((int)Math.Ceiling(items * 0.02), 20, 250);

    /// <summary>The worst kept score of a unit, or -infinity while the heap is not full (a cheap pre-filter).</summary>
    public float Threshold(int unit) => _count[unit] < N ? float.NegativeInfinity : _heap[unit * N].Score;

    public void Offer(int unit, in Peak peak)
    {
        if (float.IsNaN(peak.Score)) return;
        var heap = _heap.AsSpan(unit * N, N);
        ref int count = ref _count[unit];
        if (count < N)
        {
            int i = count++;
            heap[i] = peak;
            while (i > 0)
            {
                int parent = (i - 1) >> 1;
                if (!Peak.Better(heap[parent], heap[i])) break;
                (heap[parent], heap[i]) = (heap[i], heap[parent]);
                i = parent;
            }
        }
        else if (Peak.Better(peak, heap[0]))
        {
            heap[0] = peak;
            SiftDown(heap, N);
        }
    }

    private static void SiftDown(Span<Peak> heap, int count)
    {
        int i = 0;
        while (true)
        {
            int l = 2 * i + 1, r = l + 1, worst = i;
            if (l < count && Peak.Better(heap[worst], heap[l])) worst = l;
            if (r < count && Peak.Better(heap[worst], heap[r])) worst = r;
            if (worst == i) return;
            (heap[worst], heap[i]) = (heap[i], heap[worst]);
            i = worst;
        }
    }

    /// <summary>Adds every peak of another tracker over other items.</summary>
    public void Merge(TopN other)
    {
        if (other.Units != Units) throw new ArgumentException("unit counts differ", nameof(other));
        for (int u = 0; u < Units; u++)
            foreach (var p in other.Raw(u)) Offer(u, p);
    }

    /// <summary>The kept peaks of a unit in heap order (for merging and serialising).</summary>
    public ReadOnlySpan<Peak> Raw(int unit) => _heap.AsSpan(unit * N, _count[unit]);

    /// <summary>The kept peaks of a unit, best first.</summary>
    public Peak[] Sorted(int unit)
    {
        var result = Raw(unit).ToArray();
        Array.Sort(result, static (a, b) => Peak.Better(a, b) ? -1 : Peak.Better(b, a) ? 1 : 0);
        return result;
    }
}
