using AuditSvc.Compute.Activations;
using AuditSvc.Core.Activations;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// Folds an audit's chunks, one at a time and in item order, into the activation result the analysis reads: score
/// rows into a <see cref="ScoreStore"/> (which spills to disk past its limit), peaks into one <see cref="TopN"/>,
/// predictions into flat arrays. Nothing of a chunk is kept once <see cref="Add"/> returns, so a merge holds one
/// chunk at a time however many there are. The chunks must tile the items exactly: each item in exactly one chunk.
/// </summary>
public sealed class ChunkMerger(IReadOnlyList<LayerSlice> layers, int items, PassOptions options) : IDisposable
{
    private ScoreStore? _store;
    private TopN? _top;
    private readonly bool[] _scored = new bool[items];
    private readonly int[] _predicted = Enumerable.Repeat(-1, items).ToArray();
    private float[] _probabilities = [];
    private readonly List<PassProblem> _problems = [];
    private float[] _row = [];
    private int _units = -1, _n, _k, _next;

    /// <summary>Chunks folded so far.</summary>
    public int Chunks { get; private set; }

    public void Add(ChunkResult c)
    {
        if (_units < 0)
        {
            (_units, _n, _k) = (c.Units, c.TopN, c.ClassCount);
            _store = new ScoreStore(items, _units, memoryLimitBytes: options.ScoreMemoryLimitBytes, spillDir: options.SpillDirectory);
            _top = new TopN(_units, _n);
            _probabilities = new float[(long)items * _k];
            _row = new float[_units];
        }
        if (c.Units != _units || c.TopN != _n || c.ClassCount != _k) throw new InvalidDataException($"chunk at {c.Start} does not match the others");
        if (c.Start != _next) throw new InvalidDataException($"chunk at item {c.Start} arrived where item {_next} was due: chunks must cover the items once, in order");
        if (c.Count < 1 || (long)c.Start + c.Count > items) throw new InvalidDataException($"chunk at {c.Start} with {c.Count} items does not fit {items} items");
        for (int i = 0; i < c.Count; i++)
        {
            if (!c.Scored[i]) continue;
            for (int u = 0; u < _units; u++) _row[u] = (float)c.Scores[(long)i * _units + u];
            _store!.WriteRow(c.Start + i, _row);
        }
        _store!.SpillIfNeeded(c.Start + c.Count);
        for (int u = 0; u < _units; u++) foreach (var p in c.Top[u]) _top!.Offer(u, p);
        c.Scored.CopyTo(_scored, c.Start);
        c.Predicted.CopyTo(_predicted, c.Start);
        c.Probabilities.CopyTo(_probabilities, (long)c.Start * _k);
        _problems.AddRange(c.Problems);
        _next = c.Start + c.Count;
        Chunks++;
    }

    /// <summary>The merged result; its score store is the caller's to dispose from here on.</summary>
    public ActivationResult Finish()
    {
        if (_store is null) throw new InvalidDataException("no chunks to merge");
        if (_next != items) throw new InvalidDataException($"the chunks cover items 0 to {_next - 1} of {items}");
        var result = new ActivationResult(layers, _store, _top!, _scored, _predicted, _probabilities, _k, _problems.OrderBy(p => p.Item).ToList());
        _store = null;
        return result;
    }

    /// <summary>Frees the score store (and its spill files) of a merge that did not finish.</summary>
    public void Dispose()
    {
        (_store as IDisposable)?.Dispose();
        _store = null;
    }
}
