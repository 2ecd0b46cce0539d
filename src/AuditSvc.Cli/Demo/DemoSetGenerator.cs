using AuditSvc.Core.ImageSets;
using System.Globalization;
using System.Text;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.Formats.Png;

namespace AuditSvc.Cli.Demo;

/// <summary>
/// Writes the demo image set. The scenario is invented for the demo and describes no real cooperative or
/// data: a fruit cooperative grades lemons photographed on packing lines (sound / spotted / mouldy); one line's
/// camera burns a date stamp into the corner (planted local cue, linked to mouldy) and one line has a blue belt
/// (planted global cue, linked to spotted); the camera column is independent of the label.
/// </summary>
public static class DemoSetGenerator
{
    public const string ManifestHeader = "image,label,stamp,belt,camera,defect_area";

    /// <summary>Writes images and manifest.csv into <paramref name="outDir"/>; returns the manifest path.</summary>
    public static string Write(string outDir, DemoSetOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        var imageDir = Path.Combine(outDir, "images");
        Directory.CreateDirectory(imageDir);

        var items = new DemoItem[options.Count];
        var encoder = new PngEncoder { CompressionLevel = PngCompressionLevel.BestSpeed };
        Parallel.For(0, options.Count, i =>
        {
            var item = Draw(i, options);
            items[i] = item;
            using var image = Render(item, options.Seed).ToImage();
            image.Save(Path.Combine(outDir, item.ImagePath), encoder);
        });

        var manifest = Path.Combine(outDir, "manifest.csv");
        var csv = new StringBuilder(ManifestHeader).Append('\n');
        foreach (var item in items)
        {
            csv.Append(CsvCell.Line([item.ImagePath, item.Label, item.Stamp ? "yes" : "no", item.BlueBelt ? "blue" : "grey",
                $"cam{item.Camera + 1}", item.DefectArea.ToString("F2", CultureInfo.InvariantCulture)])).Append('\n');
        }
        File.WriteAllText(manifest, csv.ToString());
        return manifest;
    }

    /// <summary>Draws image <paramref name="index"/>'s label and attributes; depends only on (seed, index).</summary>
    public static DemoItem Draw(int index, DemoSetOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        var rng = new Random(Mix(options.Seed, index, 1));
        var label = rng.Next(3);
        var camera = rng.Next(3);
        var uStamp = rng.NextDouble();
        var uBelt = rng.NextDouble();
        var uArea = rng.NextDouble();

        // P(cue | its class) = A, P(cue | each other class) = (1 − A)/2: each cue's overall rate stays 1/3,
        // and A = 1/3 makes it independent of the label.
        var a = options.CueAgreement;
        var stamp = uStamp < (label == 2 ? a : (1 - a) / 2);
        var blue = uBelt < (label == 1 ? a : (1 - a) / 2);

        // Percent of the face showing defects; spotted (2–9%) and mouldy (3–10%) overlap on 3–9%.
        var area = label switch
        {
            0 => 1.0 * uArea,
            1 => 2 + 7 * uArea,
            _ => 3 + 7 * uArea,
        };
        return new DemoItem(index, DemoItem.Labels[label], Apply(options.Stamp, stamp), Apply(options.Belt, blue), camera,
            Math.Round(area, 2));
    }

    /// <summary>Paints the pixels of a drawn item; the same (seed, item) always gives the same pixels.</summary>
    internal static Canvas Render(DemoItem item, int seed) => LemonPainter.Paint(item, new Random(Mix(seed, item.Index, 2)));

    private static bool Apply(CueOverride mode, bool drawn) => mode switch
    {
        CueOverride.On => true,
        CueOverride.Off => false,
        CueOverride.Flip => !drawn,
        _ => drawn,
    };

    // System.Random(int) is a fixed, documented algorithm, so a per-image seed keeps image i stable across counts.
    private static int Mix(int seed, int index, int stream)
    {
        var h = (ulong)(uint)seed * 0x9E3779B97F4A7C15UL ^ (ulong)(uint)index * 0xBF58476D1CE4E5B9UL ^ (ulong)stream * 0x94D049BB133111EBUL;
        h ^= h >> 31;
        h *= 0xD6E8FEB86CB4A4F1UL;
        h ^= h >> 29;
        return (int)(h & 0x7FFFFFFF);
    }
}
