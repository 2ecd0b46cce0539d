using AuditSvc.Core.ImageSets;
using System.Text;
using AuditSvc.Cli.Demo;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.Formats.Png;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Cli.Scenarios;

/// <summary>
/// Writes an image set of an invented validation scenario (glazed tiles on a kiln conveyor graded by surface
/// flaw, with one planted cue). Nothing here describes a real factory, camera or image.
/// </summary>
public static class ScenarioSetGenerator
{
    /// <summary>The manifest's header: image, label, the cue's column and two innocent columns (or just the first two).</summary>
    public static string Header(ScenarioSetOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        return options.Bare ? "image,label" : $"image,label,{options.Scenario.Cue.Column},shift,kiln";
    }

    /// <summary>Writes images and manifest.csv into <paramref name="outDir"/>; returns the manifest path.</summary>
    public static string Write(string outDir, ScenarioSetOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        Directory.CreateDirectory(Path.Combine(outDir, "images"));

        var items = new ScenarioItem[options.Count];
        var encoder = new PngEncoder { CompressionLevel = PngCompressionLevel.BestSpeed };
        Parallel.For(0, options.Count, i =>
        {
            var item = Draw(i, options);
            items[i] = item;
            using var image = Render(item, options.Scenario, options.Seed);
            image.Save(Path.Combine(outDir, item.ImagePath), encoder);
        });

        var cue = options.Scenario.Cue;
        var csv = new StringBuilder(Header(options)).Append('\n');
        foreach (var item in items)
        {
            string?[] cells = options.Bare
                ? [item.ImagePath, item.Label]
                : [item.ImagePath, item.Label, item.Cue ? cue.Present : cue.Absent, item.ShiftName, item.KilnName];
            csv.Append(CsvCell.Line(cells)).Append('\n');
        }
        var manifest = Path.Combine(outDir, "manifest.csv");
        File.WriteAllText(manifest, csv.ToString());
        return manifest;
    }

    /// <summary>Draws image <paramref name="index"/>'s label and attributes; depends only on (seed, index).</summary>
    public static ScenarioItem Draw(int index, ScenarioSetOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        var scenario = options.Scenario;
        var rng = new Random(Mix(options.Seed, index, 1));
        var label = rng.Next(scenario.Classes);
        var uCue = rng.NextDouble();
        var shift = rng.Next(3);
        var kiln = rng.Next(2);

        // P(cue | cue class) = A, P(cue | each other class) = (1 − A)/(K − 1): A = 1/K makes it independent of the label.
        var a = options.CueAgreement;
        var cue = uCue < (label == scenario.CueClassIndex ? a : (1 - a) / (scenario.Classes - 1));
        var shown = options.CueMode switch
        {
            CueOverride.On => true,
            CueOverride.Off => false,
            CueOverride.Flip => !cue,
            _ => cue,
        };
        return new ScenarioItem(index, label, Scenario.AllLabels[label], shown, shift, kiln);
    }

    /// <summary>Paints a drawn item; the same (scenario, seed, item) always gives the same pixels.</summary>
    public static Image<Rgb24> Render(ScenarioItem item, Scenario scenario, int seed)
    {
        ArgumentNullException.ThrowIfNull(item);
        ArgumentNullException.ThrowIfNull(scenario);
        // Separate streams: the scene never sees how many numbers the cue drew, and the reverse.
        var draws = CuePainter.Draw(scenario.Cue, new Random(Mix(seed, item.Index, 3)));
        var stripes = item.Cue && scenario.Cue is BackdropCue ? draws.Stripes : (TilePainter.Stripes?)null;
        var canvas = TilePainter.Paint(item, new Random(Mix(seed, item.Index, 2)), stripes);
        if (item.Cue) CuePainter.ApplyToCanvas(canvas, scenario.Cue, draws);
        var image = canvas.ToImage();
        return item.Cue && scenario.Cue is RecompressCue jpeg ? CuePainter.Recompress(image, jpeg) : image;
    }

    // System.Random(int) is a fixed, documented algorithm, so a per-image seed keeps image i stable across counts.
    private static int Mix(int seed, int index, int stream)
    {
        var h = (ulong)(uint)seed * 0xD1B54A32D192ED03UL ^ (ulong)(uint)index * 0xABC98388FB8FAC03UL ^ (ulong)stream * 0x8CB92BA72F3D8DD7UL;
        h ^= h >> 32;
        h *= 0xE7037ED1A0B428DBUL;
        h ^= h >> 29;
        return (int)(h & 0x7FFFFFFF);
    }
}
