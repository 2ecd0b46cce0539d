using AuditSvc.Cli.Demo;
using AuditSvc.Core;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Cli.Tests.Demo;

public sealed class DemoSetGeneratorTests : IDisposable
{
    private readonly string _root = Path.Combine(Path.GetTempPath(), "auditsvc-demo-" + Guid.NewGuid().ToString("N"));

    public void Dispose()
    {
        if (Directory.Exists(_root)) Directory.Delete(_root, recursive: true);
    }

    private string Dir(string name) => Path.Combine(_root, name);

    [Fact]
    public void Write_SameSeedDifferentCount_SameBytesForImageZero()
    {
        DemoSetGenerator.Write(Dir("a"), new DemoSetOptions(3, 0.9, 11));
        DemoSetGenerator.Write(Dir("b"), new DemoSetOptions(7, 0.9, 11));
        DemoSetGenerator.Write(Dir("c"), new DemoSetOptions(3, 0.9, 12));

        var a = File.ReadAllBytes(Path.Combine(Dir("a"), "images", "00000.png"));
        var b = File.ReadAllBytes(Path.Combine(Dir("b"), "images", "00000.png"));
        var c = File.ReadAllBytes(Path.Combine(Dir("c"), "images", "00000.png"));
        Assert.Equal(a, b);
        Assert.NotEqual(a, c);
    }

    [Fact]
    public void Write_AnyCount_ManifestHasColumnsAndRelativePaths()
    {
        var manifest = DemoSetGenerator.Write(Dir("m"), new DemoSetOptions(5, 0.9, 3));
        var lines = File.ReadAllLines(manifest);

        Assert.Equal("image,label,stamp,belt,camera,defect_area", lines[0]);
        Assert.Equal(6, lines.Length);
        foreach (var line in lines.Skip(1))
        {
            var f = line.Split(',');
            Assert.Equal(6, f.Length);
            Assert.True(File.Exists(Path.Combine(Dir("m"), f[0])), f[0]);
            Assert.Contains(f[1], new[] { "sound", "spotted", "mouldy" });
            Assert.Contains(f[2], new[] { "yes", "no" });
            Assert.Contains(f[3], new[] { "grey", "blue" });
            Assert.Contains(f[4], new[] { "cam1", "cam2", "cam3" });
            Assert.InRange(double.Parse(f[5], System.Globalization.CultureInfo.InvariantCulture), 0, 100);
        }
        using var image = Image.Load<Rgb24>(Path.Combine(Dir("m"), "images", "00000.png"));
        Assert.Equal(64, image.Width);
        Assert.Equal(64, image.Height);
    }

    [Fact]
    public void Write_FewHundredImages_CueRatesNearAgreement()
    {
        const double a = 0.85;
        var rows = File.ReadAllLines(DemoSetGenerator.Write(Dir("r"), new DemoSetOptions(600, a, 5)))
            .Skip(1).Select(l => l.Split(',')).ToList();

        // Tolerance 0.1 is about four binomial standard deviations at ~200 images per class.
        Assert.InRange(Rate(rows, "mouldy", r => r[2] == "yes"), a - 0.1, a + 0.1);
        Assert.InRange(Rate(rows, "sound", r => r[2] == "yes"), (1 - a) / 2 - 0.1, (1 - a) / 2 + 0.1);
        Assert.InRange(Rate(rows, "spotted", r => r[3] == "blue"), a - 0.1, a + 0.1);
        Assert.InRange(Rate(rows, "mouldy", r => r[3] == "blue"), (1 - a) / 2 - 0.1, (1 - a) / 2 + 0.1);
        // The camera column is drawn uniformly whatever the label.
        foreach (var label in new[] { "sound", "spotted", "mouldy" })
            Assert.InRange(Rate(rows, label, r => r[4] == "cam1"), 1.0 / 3 - 0.1, 1.0 / 3 + 0.1);
    }

    [Fact]
    public void Draw_IndependentAgreement_SameCueRateInEveryClass()
    {
        var options = new DemoSetOptions(3000, DemoSetOptions.IndependentAgreement, 9);
        var items = Enumerable.Range(0, options.Count).Select(i => DemoSetGenerator.Draw(i, options)).ToList();

        foreach (var label in DemoItem.Labels)
        {
            var ofLabel = items.Where(x => x.Label == label).ToList();
            // About 1000 per class: 0.06 is more than four standard deviations of a rate near 1/3.
            Assert.InRange(ofLabel.Count(x => x.Stamp) / (double)ofLabel.Count, 1.0 / 3 - 0.06, 1.0 / 3 + 0.06);
            Assert.InRange(ofLabel.Count(x => x.BlueBelt) / (double)ofLabel.Count, 1.0 / 3 - 0.06, 1.0 / 3 + 0.06);
        }
    }

    [Fact]
    public void Write_StampFlipped_OnlyStampStripChanges()
    {
        DemoSetGenerator.Write(Dir("plain"), new DemoSetOptions(4, 0.9, 21));
        DemoSetGenerator.Write(Dir("flip"), new DemoSetOptions(4, 0.9, 21, Stamp: CueOverride.Flip));

        for (var i = 0; i < 4; i++)
        {
            using var p = Image.Load<Rgb24>(Path.Combine(Dir("plain"), "images", $"{i:D5}.png"));
            using var f = Image.Load<Rgb24>(Path.Combine(Dir("flip"), "images", $"{i:D5}.png"));
            var changedInStrip = 0;
            for (var y = 0; y < 64; y++)
            {
                for (var x = 0; x < 64; x++)
                {
                    var inStrip = x >= 47 && x < 63 && y >= 56 && y < 63;
                    if (!inStrip) Assert.Equal(p[x, y], f[x, y]);
                    else if (!p[x, y].Equals(f[x, y])) changedInStrip++;
                }
            }
            Assert.True(changedInStrip > 50, $"image {i}: {changedInStrip} strip pixels changed");
        }
    }

    [Fact]
    public void Write_AgreementOutOfRange_ThrowsNamingField()
    {
        var e = Assert.Throws<AuditInputException>(() => DemoSetGenerator.Write(Dir("x"), new DemoSetOptions(10, 1.5, 1)));
        Assert.Equal("--cue-agreement", e.Subject);
    }

    private static double Rate(List<string[]> rows, string label, Func<string[], bool> has)
    {
        var ofLabel = rows.Where(r => r[1] == label).ToList();
        return ofLabel.Count(has) / (double)ofLabel.Count;
    }
}
