using AuditSvc.Compute.Activations;
using AuditSvc.Core.Activations;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// What one chunk of items [Start, Start + Count) contributes to an audit: its rows of the scores matrix (float16),
/// each unit's top-n peaks among its items, and its items' predictions. Chunks are independent and exactly
/// mergeable (<see cref="ChunkMerger"/>); <see cref="Write"/> and <see cref="Read"/> move them between processes.
/// </summary>
public sealed record ChunkResult(
    int Start,
    int Count,
    int Units,
    int TopN,
    int ClassCount,
    Half[] Scores,
    Peak[][] Top,
    bool[] Scored,
    int[] Predicted,
    float[] Probabilities,
    IReadOnlyList<PassProblem> Problems)
{
    private const int Magic = 0x4B485541; // "AUHK"
    private const int Version = 2;

    /// <summary>Cuts the chunk's part out of a pass run over [start, start + count).</summary>
    public static ChunkResult From(ActivationResult act, int start, int count)
    {
        int units = act.UnitCount, k = act.ClassCount;
        var scores = new Half[(long)count * units];
        if (act.Scores is not ScoreStore store) throw new ArgumentException("the pass's scores must be a ScoreStore", nameof(act));
        store.ReadRows(start, count, scores);
        return new ChunkResult(start, count, units, act.Top.N, k, scores,
            Enumerable.Range(0, units).Select(u => act.Top.Raw(u).ToArray()).ToArray(),
            act.Scored.AsSpan(start, count).ToArray(), act.Predicted.AsSpan(start, count).ToArray(),
            act.Probabilities.AsSpan(start * k, count * k).ToArray(), act.Problems.ToList());
    }

    /// <summary>Writes the chunk in format 2: scores as float16, peaks in the compact form of <see cref="ChunkPeaks"/>.</summary>
    public void Write(Stream stream)
    {
        using var w = new BinaryWriter(stream, System.Text.Encoding.UTF8, leaveOpen: true);
        w.Write(Magic); w.Write(Version);
        w.Write(Start); w.Write(Count); w.Write(Units); w.Write(TopN); w.Write(ClassCount);
        foreach (var h in Scores) w.Write(h);
        ChunkPeaks.Write(w, this);
        foreach (var s in Scored) w.Write(s);
        foreach (var p in Predicted) w.Write(p);
        foreach (var p in Probabilities) w.Write(p);
        w.Write(Problems.Count);
        foreach (var p in Problems) { w.Write(p.Item); w.Write(p.File); w.Write(p.Reason); }
    }

    /// <summary>Reads a chunk written by <see cref="Write"/>, or by format 1 (peaks as four plain fields each); refuses anything else.</summary>
    public static ChunkResult Read(Stream stream)
    {
        using var r = new BinaryReader(stream, System.Text.Encoding.UTF8, leaveOpen: true);
        if (r.ReadInt32() != Magic) throw new InvalidDataException("not a chunk result");
        var version = r.ReadInt32();
        if (version is not (1 or Version))
            throw new InvalidDataException($"chunk result format {version} is not one this build reads (1 or {Version}); run the audit again");
        int start = r.ReadInt32(), count = r.ReadInt32(), units = r.ReadInt32(), n = r.ReadInt32(), k = r.ReadInt32();
        if (start < 0 || count < 0 || units < 0 || n < 1 || k < 0 || (long)count * units > Array.MaxLength || (long)count * k > Array.MaxLength)
            throw new InvalidDataException($"chunk result header out of range (start {start}, items {count}, units {units}, top-n {n}, classes {k})");
        var scores = new Half[(long)count * units];
        for (long i = 0; i < scores.LongLength; i++) scores[i] = r.ReadHalf();
        var top = version == 1 ? ReadPlainPeaks(r, units, count) : ChunkPeaks.Read(r, start, count, units, n, scores);
        var scored = new bool[count];
        for (int i = 0; i < count; i++) scored[i] = r.ReadBoolean();
        var predicted = new int[count];
        for (int i = 0; i < count; i++) predicted[i] = r.ReadInt32();
        var probs = new float[count * k];
        for (int i = 0; i < probs.Length; i++) probs[i] = r.ReadSingle();
        var problems = new List<PassProblem>();
        for (int i = r.ReadInt32(); i > 0; i--) problems.Add(new PassProblem(r.ReadInt32(), r.ReadString(), r.ReadString()));
        return new ChunkResult(start, count, units, n, k, scores, top, scored, predicted, probs, problems);
    }

    // Format 1: per unit a count, then item (int32), score (float32), y and x (int16) per peak.
    private static Peak[][] ReadPlainPeaks(BinaryReader r, int units, int count)
    {
        var top = new Peak[units][];
        for (int u = 0; u < units; u++)
        {
            var peaks = r.ReadInt32();
            if (peaks < 0 || peaks > count) throw new InvalidDataException($"unit {u} claims {peaks} peaks in a chunk of {count} items");
            top[u] = new Peak[peaks];
            for (int j = 0; j < top[u].Length; j++) top[u][j] = new Peak(r.ReadInt32(), r.ReadSingle(), r.ReadInt16(), r.ReadInt16());
        }
        return top;
    }
}
