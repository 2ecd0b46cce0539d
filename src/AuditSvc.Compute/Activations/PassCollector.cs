using AuditSvc.Core.Activations;
using AuditSvc.Core.ImageSets;

namespace AuditSvc.Compute.Activations;

/// <summary>
/// One batch's slots: which items they hold, whether each decoded, and the unit scores and peaks the reduce step
/// wrote for them. Reused across batches so the pass allocates nothing per image.
/// </summary>
internal sealed class PassBatch(int capacity, int slot, int units)
{
    public readonly float[] Input = new float[capacity * slot];
    public readonly int[] Items = new int[capacity];
    public readonly bool[] Ok = new bool[capacity];
    public readonly string?[] Error = new string?[capacity];
    public readonly float[] Scores = new float[capacity * units];
    public readonly short[] PeakY = new short[capacity * units];
    public readonly short[] PeakX = new short[capacity * units];
    public int Count;
}

/// <summary>
/// What the pass keeps across batches: the scores matrix, each unit's top-n, per-item predictions and
/// probabilities, and problems. Both entry points of <see cref="ActivationPass"/> feed batches through it.
/// </summary>
internal sealed class PassCollector
{
    private readonly int _units;
    private readonly Func<int, string> _fileOf;

    public PassCollector(int items, int units, int classes, int topN, PassOptions options, Func<int, string> fileOf)
    {
        _units = units;
        _fileOf = fileOf;
        Store = new ScoreStore(items, units, memoryLimitBytes: options.ScoreMemoryLimitBytes, spillDir: options.SpillDirectory);
        Top = new TopN(units, topN);
        Scored = new bool[items];
        Predicted = new int[items];
        Array.Fill(Predicted, -1);
        // O(items × classes) floats: 12 bytes an image for 3 classes, 2 KB an image for a 512-wide output.
        Probabilities = new float[(long)items * classes];
        ClassCount = classes;
    }

    public ScoreStore Store { get; }

    public TopN Top { get; }

    public bool[] Scored { get; }

    public int[] Predicted { get; }

    public float[] Probabilities { get; }

    public int ClassCount { get; }

    public List<PassProblem> Problems { get; } = [];

    /// <summary>Takes a reduced batch: stores its rows, offers its peaks, records predictions.</summary>
    public void Collect(PassBatch batch)
    {
        int k = ClassCount;
        for (int i = 0; i < batch.Count; i++)
        {
            int item = batch.Items[i];
            if (!batch.Ok[i])
            {
                Problems.Add(new PassProblem(item, _fileOf(item), batch.Error[i]!));
                continue;
            }
            var row = batch.Scores.AsSpan(i * _units, _units);
            var p = Probabilities.AsSpan((int)((long)item * k), k);
            if (HasNaN(row) || HasNaN(p))
            {
                // NaN compares with nothing: ranks, maxima and the prediction would all be arbitrary. Reported, not guessed.
                Problems.Add(new PassProblem(item, _fileOf(item), "the model produced NaN (not a number) for this image; its scores and prediction were not used"));
                continue;
            }
            ClampToStored(row);
            Scored[item] = true;
            Store.WriteRow(item, row);
            int b = i * _units;
            for (int u = 0; u < row.Length; u++)
                if (row[u] >= Top.Threshold(u))
                    Top.Offer(u, new Peak(item, row[u], batch.PeakY[b + u], batch.PeakX[b + u]));
            int best = 0;
            for (int c = 1; c < k; c++) if (p[c] > p[best]) best = c;
            Predicted[item] = best;
        }
    }

    /// <summary>
    /// Scores are stored as 16-bit floats (±65,504): larger magnitudes, infinities included, are clamped to that range so
    /// that the stored matrix, the peaks and the exemplars rank alike (the clamped scores tie at the top).
    /// </summary>
    internal static bool HasNaN(ReadOnlySpan<float> values)
    {
        foreach (var v in values)
            if (float.IsNaN(v)) return true;
        return false;
    }

    internal static void ClampToStored(Span<float> row)
    {
        float max = (float)Half.MaxValue;
        for (int u = 0; u < row.Length; u++) row[u] = Math.Clamp(row[u], -max, max);
    }

    public ActivationResult Result(IReadOnlyList<LayerSlice> layers)
    {
        // Every row is in: the arrays kept for later blocks and the transposition buffer are garbage from here on.
        Store.ReleaseSpare();
        return new(layers, Store, Top, Scored, Predicted, Probabilities, ClassCount, Problems);
    }
}
