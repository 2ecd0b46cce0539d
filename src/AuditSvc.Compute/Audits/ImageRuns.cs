using AuditSvc.Compute.Activations;
using AuditSvc.Core.Activations;
using AuditSvc.Core.ImageSets;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// Runs edited images (already at the input size) through the model in batches and returns each image's
/// predicted class and, when asked, one unit's score. Used by the intervention pass; counts every run.
/// </summary>
public sealed class ImageRuns(ActivationPass pass) : IDisposable
{
    /// <summary>Bytes of fitted images held for edits: this cache's bound, and the most a pass keeps for them.</summary>
    public const long CacheBytes = 128L << 20;
    private readonly Dictionary<int, Image<Rgb24>> _cache = [];

    public int Runs { get; private set; }

    /// <summary>The image of an item brought to the input size (cached; callers clone before editing).</summary>
    public Image<Rgb24>? Fitted(string path, int item)
    {
        if (pass.Kept(item) is { } kept) return kept;
        if (_cache.TryGetValue(item, out var img)) return img;
        img = TryLoad(path);
        if (img is null) return null;
        // Bounded by bytes, not count: 224×224 images are 150 KB each.
        // Evicted images are not disposed: a caller may still hold one; the collector takes them.
        if ((_cache.Count + 1L) * img.Width * img.Height * 3 > CacheBytes) _cache.Clear();
        _cache[item] = img;
        return img;
    }

    /// <summary>
    /// Decodes the items an edit is about to read on the pass's decode threads, as many as the cache has room for, so
    /// that <see cref="Fitted"/> finds them: the edits stay in order on one thread, and an image decodes to the same
    /// pixels whichever thread decodes it. An image that fails here is not cached; <see cref="Fitted"/> tries it again
    /// and reports it as before.
    /// </summary>
    public void Prefetch(ItemTable table, IEnumerable<int> items)
    {
        long each = Math.Max(1L, (long)Width * Height * 3);
        int room = (int)Math.Max(0, CacheBytes / each - _cache.Count);
        var todo = items.Where(i => pass.Kept(i) is null && !_cache.ContainsKey(i)).Distinct().Take(room).ToList();
        int threads = Math.Max(1, pass.Options.DecodeThreads);
        if (todo.Count < 2 || threads < 2) return;
        var loaded = new Image<Rgb24>?[todo.Count];
        Parallel.For(0, todo.Count, new ParallelOptions { MaxDegreeOfParallelism = threads },
            j => loaded[j] = TryLoad(table.Items[todo[j]].Path));
        for (int j = 0; j < todo.Count; j++)
            if (loaded[j] is { } img) _cache[todo[j]] = img;
    }

    private Image<Rgb24>? TryLoad(string path)
    {
        try
        {
            return pass.Preprocessor.Load(path);
        }
        catch (Exception e) when (e is UnknownImageFormatException or InvalidImageContentException or IOException or NotSupportedException)
        {
            return null;
        }
    }

    /// <summary>Predicted class of each image, and the score of <paramref name="unit"/> when it is not null.</summary>
    public (int[] Predicted, float[] UnitScore) Run(IReadOnlyList<Image<Rgb24>> images, (LayerSlice Layer, int Channel)? unit = null)
    {
        // Predictions alone come from the pass's own session (the one that recorded the unedited predictions); the
        // full-maps session is built only when a unit's score is asked for.
        var runner = unit is null ? pass.ClassRunner : pass.Runner;
        int slot = pass.Preprocessor.SlotLength, k = runner.Plan.ClassCount;
        int batch = pass.Plan.Batch == Core.Models.BatchMode.ConcurrentSingle ? 1 : Math.Max(1, pass.Options.BatchSize);
        var predicted = new int[images.Count];
        var scores = new float[images.Count];
        var input = new float[batch * slot];
        int layerIndex = unit is null ? -1 : pass.Layers.ToList().FindIndex(l => l.Layer.Name == unit.Value.Layer.Layer.Name);
        for (int s = 0; s < images.Count; s += batch)
        {
            int count = Math.Min(batch, images.Count - s);
            for (int i = 0; i < count; i++) pass.Preprocessor.Write(images[s + i], input.AsSpan(i * slot, slot));
            runner.Run(input.AsMemory(0, count * slot), count, (cls, layers) =>
            {
                for (int i = 0; i < count; i++)
                {
                    var row = cls.Slice(i * k, k);
                    int best = 0;
                    for (int c = 1; c < k; c++) if (row[c] > row[best]) best = c;
                    predicted[s + i] = best;
                }
                if (layerIndex < 0) return;
                var data = layers[layerIndex].GetTensorDataAsSpan<float>();
                int channels = unit!.Value.Layer.Count, plane = data.Length / (count * channels);
                for (int i = 0; i < count; i++)
                    scores[s + i] = ChannelMax.Find(data.Slice((i * channels + unit.Value.Channel) * plane, plane)).Max;
            }, readLayers: layerIndex >= 0);
            Runs += count;
        }
        return (predicted, scores);
    }

    /// <summary>Input height: every fitted image has it.</summary>
    public int Height => pass.Preprocessor.Recipe.Height;

    /// <summary>Input width.</summary>
    public int Width => pass.Preprocessor.Recipe.Width;

    /// <summary>Copies the pixels under <paramref name="mask"/> (row-major, input size) from one image into another.</summary>
    public static void Paste(Image<Rgb24> from, Image<Rgb24> to, bool[] mask)
    {
        int w = to.Width;
        for (int y = 0; y < to.Height; y++)
            for (int x = 0; x < w; x++)
                if (mask[y * w + x]) to[x, y] = from[x, y];
    }

    /// <summary>Fills the pixels under <paramref name="mask"/> with one colour.</summary>
    public static void Fill(Image<Rgb24> image, bool[] mask, Rgb24 colour)
    {
        int w = image.Width;
        for (int y = 0; y < image.Height; y++)
            for (int x = 0; x < w; x++)
                if (mask[y * w + x]) image[x, y] = colour;
    }

    /// <summary>
    /// Moves each channel's mean and spread of <paramref name="image"/> to those of <paramref name="like"/>
    /// (x' = (x − μ) / σ · σ' + μ', clamped to 0..255): a global colour cue carried over without its content.
    /// </summary>
    public static void MatchColour(Image<Rgb24> image, Image<Rgb24> like)
    {
        var (m0, s0) = ChannelStats(image);
        var (m1, s1) = ChannelStats(like);
        var gain = new double[3];
        for (int c = 0; c < 3; c++) gain[c] = s0[c] > 1e-6 ? s1[c] / s0[c] : 1;
        for (int y = 0; y < image.Height; y++)
            for (int x = 0; x < image.Width; x++)
            {
                var p = image[x, y];
                image[x, y] = new Rgb24(Level((p.R - m0[0]) * gain[0] + m1[0]), Level((p.G - m0[1]) * gain[1] + m1[1]), Level((p.B - m0[2]) * gain[2] + m1[2]));
            }
    }

    private static byte Level(double v) => (byte)Math.Clamp(Math.Round(v), 0, 255);

    private static (double[] Mean, double[] Sd) ChannelStats(Image<Rgb24> image)
    {
        var sum = new double[3];
        var sq = new double[3];
        double n = image.Width * (double)image.Height;
        for (int y = 0; y < image.Height; y++)
            for (int x = 0; x < image.Width; x++)
            {
                var p = image[x, y];
                sum[0] += p.R; sum[1] += p.G; sum[2] += p.B;
                sq[0] += p.R * (double)p.R; sq[1] += p.G * (double)p.G; sq[2] += p.B * (double)p.B;
            }
        var mean = new double[3];
        var sd = new double[3];
        for (int c = 0; c < 3; c++)
        {
            mean[c] = sum[c] / n;
            sd[c] = Math.Sqrt(Math.Max(0, sq[c] / n - mean[c] * mean[c]));
        }
        return (mean, sd);
    }

    public void Dispose()
    {
        foreach (var i in _cache.Values) i.Dispose();
        _cache.Clear();
    }
}
