using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.ImageSets;

/// <summary>Folders and small images for the containment tests: each test builds its own set and what lies outside it.</summary>
internal static class ContainmentFiles
{
    public static readonly string[] Classes = ["cat", "dog"];

    public static string NewDir(string prefix, string name)
    {
        var d = Path.Combine(Path.GetTempPath(), $"auditsvc-{prefix}-{name}-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(d);
        return d;
    }

    public static void Png(string path)
    {
        Directory.CreateDirectory(Path.GetDirectoryName(path)!);
        using var img = new Image<Rgb24>(8, 8, new Rgb24(90, 90, 90));
        img.SaveAsPng(path);
    }
}
