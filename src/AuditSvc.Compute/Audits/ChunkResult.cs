using AuditSvc.Compute.Activations;
using AuditSvc.Core.Activations;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// What one chunk of items [Start, Start + Count) contributes to an audit: its rows of the scores matrix (float16),
/// each unit's top-n peaks among its items, and its items' predictions. Chunks are independent and exactly
/// mergeable (<see cref="Merge"/>); <see cref="Write"/> and <see cref="Read"/> move them between processes.
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
    private const int Version = 1;

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

    /// <summary>Merges the chunks of one audit into the activation result the analysis reads.</summary>
    public static ActivationResult Merge(IReadOnlyList<LayerSlice> layers, int items, IReadOnlyList<ChunkResult> chunks, PassOptions options)
    {
        if (chunks.Count == 0) throw new ArgumentException("no chunks", nameof(chunks));
        int units = chunks[0].Units, n = chunks[0].TopN, k = chunks[0].ClassCount;
        var store = new ScoreStore(items, units, memoryLimitBytes: options.ScoreMemoryLimitBytes, spillDir: options.SpillDirectory);
        var top = new TopN(units, n);
        var scored = new bool[items];
        var predicted = Enumerable.Repeat(-1, items).ToArray();
        var probs = new float[(long)items * k];
        var problems = new List<PassProblem>();
        var row = new float[units];
        foreach (var c in chunks.OrderBy(c => c.Start))
        {
            if (c.Units != units || c.TopN != n || c.ClassCount != k) throw new InvalidDataException($"chunk at {c.Start} does not match the others");
            for (int i = 0; i < c.Count; i++)
            {
                if (!c.Scored[i]) continue;
                for (int u = 0; u < units; u++) row[u] = (float)c.Scores[(long)i * units + u];
                store.WriteRow(c.Start + i, row);
            }
            store.SpillIfNeeded(c.Start + c.Count);
            for (int u = 0; u < units; u++) foreach (var p in c.Top[u]) top.Offer(u, p);
            c.Scored.CopyTo(scored, c.Start);
            c.Predicted.CopyTo(predicted, c.Start);
            c.Probabilities.CopyTo(probs, (long)c.Start * k);
            problems.AddRange(c.Problems);
        }
        return new ActivationResult(layers, store, top, scored, predicted, probs, k, problems.OrderBy(p => p.Item).ToList());
    }

    public void Write(Stream stream)
    {
        using var w = new BinaryWriter(stream, System.Text.Encoding.UTF8, leaveOpen: true);
        w.Write(Magic); w.Write(Version);
        w.Write(Start); w.Write(Count); w.Write(Units); w.Write(TopN); w.Write(ClassCount);
        foreach (var h in Scores) w.Write(h);
        foreach (var peaks in Top)
        {
            w.Write(peaks.Length);
            foreach (var p in peaks) { w.Write(p.Item); w.Write(p.Score); w.Write(p.Y); w.Write(p.X); }
        }
        foreach (var s in Scored) w.Write(s);
        foreach (var p in Predicted) w.Write(p);
        foreach (var p in Probabilities) w.Write(p);
        w.Write(Problems.Count);
        foreach (var p in Problems) { w.Write(p.Item); w.Write(p.File); w.Write(p.Reason); }
    }

    public static ChunkResult Read(Stream stream)
    {
        using var r = new BinaryReader(stream, System.Text.Encoding.UTF8, leaveOpen: true);
        if (r.ReadInt32() != Magic || r.ReadInt32() != Version) throw new InvalidDataException("not a chunk result of this version");
        int start = r.ReadInt32(), count = r.ReadInt32(), units = r.ReadInt32(), n = r.ReadInt32(), k = r.ReadInt32();
        var scores = new Half[(long)count * units];
        for (long i = 0; i < scores.LongLength; i++) scores[i] = r.ReadHalf();
        var top = new Peak[units][];
        for (int u = 0; u < units; u++)
        {
            top[u] = new Peak[r.ReadInt32()];
            for (int j = 0; j < top[u].Length; j++) top[u][j] = new Peak(r.ReadInt32(), r.ReadSingle(), r.ReadInt16(), r.ReadInt16());
        }
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
}
