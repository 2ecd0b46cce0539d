using AuditSvc.Core.ImageSets;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.Formats.Jpeg;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Bench;

/// <summary>
/// Photo-like test images for the bench: smooth gradients, a few blobs and sensor-like noise, so JPEG and PNG
/// decoding cost what they cost on real photos (flat images decode unrealistically fast). Deterministic per index.
/// Every fourth image is a PNG, the rest JPEG at quality 90.
/// </summary>
public static class BenchImages
{
    /// <summary>Writes <paramref name="count"/> images of <paramref name="width"/>×<paramref name="height"/> into <paramref name="dir"/>.</summary>
    public static IReadOnlyList<string> Write(string dir, int count, int width, int height)
    {
        Directory.CreateDirectory(dir);
        var paths = new string[count];
        Parallel.For(0, count, i =>
        {
            using var image = Paint(i, width, height);
            string path = Path.Combine(dir, i % 4 == 3 ? $"img{i:D5}.png" : $"img{i:D5}.jpg");
            if (i % 4 == 3) image.SaveAsPng(path);
            else image.SaveAsJpeg(path, new JpegEncoder { Quality = 90 });
            paths[i] = path;
        });
        return paths;
    }

    private static Image<Rgb24> Paint(int seed, int width, int height)
    {
        var rng = new Random(seed * 7919 + 13);
        var image = new Image<Rgb24>(width, height);
        var blobs = Enumerable.Range(0, 6).Select(_ => (X: rng.Next(width), Y: rng.Next(height), R: 10 + rng.Next(Math.Max(11, width / 4)),
            C: new Rgb24((byte)rng.Next(256), (byte)rng.Next(256), (byte)rng.Next(256)))).ToArray();
        int r0 = rng.Next(256), g0 = rng.Next(256), b0 = rng.Next(256);
        image.ProcessPixelRows(rows =>
        {
            for (int y = 0; y < height; y++)
            {
                var row = rows.GetRowSpan(y);
                for (int x = 0; x < width; x++)
                {
                    int r = (r0 + x * 128 / width) & 255, g = (g0 + y * 128 / height) & 255, b = (b0 + (x + y) * 64 / (width + height)) & 255;
                    foreach (var blob in blobs)
                    {
                        int dx = x - blob.X, dy = y - blob.Y;
                        if (dx * dx + dy * dy < blob.R * blob.R) { r = blob.C.R; g = blob.C.G; b = blob.C.B; }
                    }
                    int noise = rng.Next(-12, 13);
                    row[x] = new Rgb24(Clamp(r + noise), Clamp(g + noise), Clamp(b + noise));
                }
            }
        });
        return image;
    }

    private static byte Clamp(int v) => (byte)Math.Clamp(v, 0, 255);

    /// <summary>An item table over the files, repeated to <paramref name="items"/> entries (memory runs at 10× N reuse the files).</summary>
    public static ItemTable Table(IReadOnlyList<string> paths, int items, string root)
    {
        var list = new List<ImageItem>(items);
        for (int i = 0; i < items; i++)
        {
            var path = paths[i % paths.Count];
            list.Add(new ImageItem(i, i + 1, path, Path.GetRelativePath(root, path), 0, [], ""));
        }
        return new ItemTable(["any"], [], list, new IntakeReport(root, items, items, []));
    }
}
