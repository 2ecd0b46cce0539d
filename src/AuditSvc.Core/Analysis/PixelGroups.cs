namespace AuditSvc.Core.Analysis;

/// <summary>
/// Per-pixel running sums of images at the model's input size, split by label and by whether the image carries an
/// attribute value: the raw material of a cue region. Pixels arrive as interleaved RGB bytes, row-major.
/// Memory is labels × 2 sides × H·W·3 × 2 doubles, so the caller bounds the labels it feeds (see <see cref="MaxLabels"/>).
/// </summary>
public sealed class PixelGroups
{
    /// <summary>Labels kept at most: the map is a weighted mean over labels, and a few well-filled ones carry it.</summary>
    public const int MaxLabels = 8;

    private readonly Dictionary<int, Side[]> _byLabel = [];

    public PixelGroups(int height, int width)
    {
        if (height < 1 || width < 1) throw new ArgumentOutOfRangeException(nameof(height), "the input size must be positive");
        Height = height;
        Width = width;
    }

    public int Height { get; }

    public int Width { get; }

    internal IReadOnlyDictionary<int, Side[]> ByLabel => _byLabel;

    /// <summary>Adds one image (H·W·3 bytes, RGB interleaved) of <paramref name="label"/>, with or without the value.</summary>
    public void Add(int label, bool withValue, ReadOnlySpan<byte> rgb)
    {
        int len = Height * Width * 3;
        if (rgb.Length != len) throw new ArgumentException($"expected {len} bytes, got {rgb.Length}", nameof(rgb));
        if (!_byLabel.TryGetValue(label, out var sides))
        {
            if (_byLabel.Count >= MaxLabels) return;
            _byLabel[label] = sides = [new Side(len), new Side(len)];
        }
        var s = sides[withValue ? 1 : 0];
        s.Count++;
        var sum = s.Sum;
        var sq = s.SumSq;
        for (int i = 0; i < len; i++)
        {
            double v = rgb[i];
            sum[i] += v;
            sq[i] += v * v;
        }
    }

    internal sealed class Side(int length)
    {
        public int Count;
        public readonly double[] Sum = new double[length];
        public readonly double[] SumSq = new double[length];
    }
}
