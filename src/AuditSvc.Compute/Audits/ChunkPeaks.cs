using AuditSvc.Core.Activations;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// The compact form of a chunk's peaks (chunk format 2). A unit's peaks are written in item order: which items
/// carry one (as gaps between offsets in the chunk, or as a bitmap when most items do), then per peak its grid
/// place and its exact float32 score. The score is written as the difference between its bits and the bits of the
/// chunk's own float16 score for that item and unit, which the reader already holds: float16 keeps 10 of float32's
/// 23 mantissa bits, so the difference usually fits in two bytes, and since it is taken on the raw bits (wrapping)
/// every float comes back bit for bit, NaN, infinities and clamped values included. Ranking needs that exactness:
/// the merged top-n must equal a one-process run's.
/// </summary>
internal static class ChunkPeaks
{
    private const byte Gaps = 0, Bitmap = 1;

    public static void Write(BinaryWriter w, ChunkResult c)
    {
        var sorted = new List<Peak>();
        for (int u = 0; u < c.Units; u++)
        {
            sorted.Clear();
            sorted.AddRange(c.Top[u]);
            sorted.Sort(static (a, b) => a.Item.CompareTo(b.Item));
            w.Write7BitEncodedInt(sorted.Count);
            if (sorted.Count == 0) continue;
            for (int j = 0; j < sorted.Count; j++)
            {
                var item = sorted[j].Item;
                if (item < c.Start || item >= c.Start + c.Count)
                    throw new InvalidDataException($"a peak of unit {u} names item {item}, outside the chunk [{c.Start}, {c.Start + c.Count})");
                if (j > 0 && sorted[j - 1].Item == item) throw new InvalidDataException($"unit {u} has two peaks on item {item}");
            }
            // A bitmap costs Count/8 bytes; gaps cost about a byte per peak.
            if ((c.Count + 7) / 8 < sorted.Count)
            {
                w.Write(Bitmap);
                var bits = new byte[(c.Count + 7) / 8];
                foreach (var p in sorted) bits[(p.Item - c.Start) >> 3] |= (byte)(1 << ((p.Item - c.Start) & 7));
                w.Write(bits);
            }
            else
            {
                w.Write(Gaps);
                int previous = -1;
                foreach (var p in sorted)
                {
                    int offset = p.Item - c.Start;
                    w.Write7BitEncodedInt(offset - previous - 1);
                    previous = offset;
                }
            }
            foreach (var p in sorted)
            {
                w.Write7BitEncodedInt(ZigZag(p.Y));
                w.Write7BitEncodedInt(ZigZag(p.X));
                w.Write7BitEncodedInt(ZigZag(unchecked(BitConverter.SingleToInt32Bits(p.Score) - Predictor(c.Scores, c.Units, p.Item - c.Start, u))));
            }
        }
    }

    public static Peak[][] Read(BinaryReader r, int start, int count, int units, int n, Half[] scores)
    {
        var top = new Peak[units][];
        var offsets = new List<int>();
        for (int u = 0; u < units; u++)
        {
            int peaks = r.Read7BitEncodedInt();
            if (peaks < 0 || peaks > Math.Min(n, count)) throw new InvalidDataException($"unit {u} claims {peaks} peaks in a chunk of {count} items with top-n {n}");
            top[u] = new Peak[peaks];
            if (peaks == 0) continue;
            offsets.Clear();
            switch (r.ReadByte())
            {
                case Bitmap:
                    var bits = r.ReadBytes((count + 7) / 8);
                    for (int i = 0; i < count; i++)
                        if ((bits[i >> 3] & (1 << (i & 7))) != 0) offsets.Add(i);
                    break;
                case Gaps:
                    for (long j = 0, previous = -1; j < peaks; j++)
                    {
                        previous += (uint)r.Read7BitEncodedInt() + 1L;
                        if (previous >= count) throw new InvalidDataException($"unit {u}: a peak lies past the chunk's {count} items");
                        offsets.Add((int)previous);
                    }
                    break;
                default:
                    throw new InvalidDataException($"unit {u}: unknown peak layout");
            }
            if (offsets.Count != peaks || offsets[^1] >= count) throw new InvalidDataException($"unit {u}: its peaks do not match the chunk's items");
            for (int j = 0; j < peaks; j++)
            {
                short y = checked((short)UnZigZag(r.Read7BitEncodedInt()));
                short x = checked((short)UnZigZag(r.Read7BitEncodedInt()));
                int bits = unchecked(UnZigZag(r.Read7BitEncodedInt()) + Predictor(scores, units, offsets[j], u));
                top[u][j] = new Peak(start + offsets[j], BitConverter.Int32BitsToSingle(bits), y, x);
            }
        }
        return top;
    }

    private static int Predictor(Half[] scores, int units, int offset, int unit) =>
        BitConverter.SingleToInt32Bits((float)scores[(long)offset * units + unit]);

    private static int ZigZag(int v) => (v << 1) ^ (v >> 31);

    private static int UnZigZag(int v) => (int)((uint)v >> 1) ^ -(v & 1);
}
