using AuditSvc.Compute.Activations;
using AuditSvc.Core.Activations;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// Runs edited images (already at the input size) through the model in batches and returns each image's
/// predicted class and, when asked, one unit's score. Used by the intervention pass; counts every run.
/// </summary>
public sealed class ImageRuns(ActivationPass pass) : IDisposable
{
    private const long CacheBytes = 128L << 20;
    private readonly Dictionary<int, Image<Rgb24>> _cache = [];

    public int Runs { get; private set; }

    /// <summary>The image of an item brought to the input size (cached; callers clone before editing).</summary>
    public Image<Rgb24>? Fitted(string path, int item)
    {
        if (_cache.TryGetValue(item, out var img)) return img;
        try
        {
            img = pass.Preprocessor.Load(path);
        }
        catch (Exception e) when (e is UnknownImageFormatException or InvalidImageContentException or IOException or NotSupportedException)
        {
            return null;
        }
        // Bounded by bytes, not count: 224×224 images are 150 KB each.
        // Evicted images are not disposed: a caller may still hold one; the collector takes them.
        if ((_cache.Count + 1L) * img.Width * img.Height * 3 > CacheBytes) _cache.Clear();
        _cache[item] = img;
        return img;
    }

    /// <summary>Predicted class of each image, and the score of <paramref name="unit"/> when it is not null.</summary>
    public (int[] Predicted, float[] UnitScore) Run(IReadOnlyList<Image<Rgb24>> images, (LayerSlice Layer, int Channel)? unit = null)
    {
        var runner = pass.Runner;
        int slot = pass.Preprocessor.SlotLength, k = runner.Plan.ClassCount;
        int batch = runner.Plan.Batch == Core.Models.BatchMode.ConcurrentSingle ? 1 : Math.Max(1, pass.Options.BatchSize);
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

    /// <summary>Copies the pixels of <paramref name="box"/> from one image into another at the same place.</summary>
    public static void Paste(Image<Rgb24> from, Image<Rgb24> to, Core.Models.Box box)
    {
        for (int y = box.Y; y < box.Y + box.Height; y++)
            for (int x = box.X; x < box.X + box.Width; x++)
                to[x, y] = from[x, y];
    }

    /// <summary>Fills <paramref name="box"/> with one colour.</summary>
    public static void Fill(Image<Rgb24> image, Core.Models.Box box, Rgb24 colour)
    {
        for (int y = box.Y; y < box.Y + box.Height; y++)
            for (int x = box.X; x < box.X + box.Width; x++)
                image[x, y] = colour;
    }

    public void Dispose()
    {
        foreach (var i in _cache.Values) i.Dispose();
        _cache.Clear();
    }
}
