using AuditSvc.Cli.Scenarios;
using AuditSvc.Core;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Cli.Tests.Scenarios;

public sealed class ScenarioSetGeneratorTests : IDisposable
{
    private readonly string _root = Path.Combine(Path.GetTempPath(), "auditsvc-scen-" + Guid.NewGuid().ToString("N"));

    public void Dispose()
    {
        if (Directory.Exists(_root)) Directory.Delete(_root, recursive: true);
    }

    private string Dir(string name) => Path.Combine(_root, name);

    private static Scenario Named(string name) => ScenarioCatalogue.Find(name)!;

    [Theory]
    [InlineData("stamp-top-left")]
    [InlineData("source-jpeg")]
    [InlineData("backdrop-stripes-4class")]
    public void Write_SameSeedDifferentCount_SameBytesForSharedImages(string name)
    {
        var scenario = Named(name);
        ScenarioSetGenerator.Write(Dir("a"), new ScenarioSetOptions(scenario, 3, 0.9, 11));
        ScenarioSetGenerator.Write(Dir("b"), new ScenarioSetOptions(scenario, 8, 0.9, 11));
        ScenarioSetGenerator.Write(Dir("c"), new ScenarioSetOptions(scenario, 3, 0.9, 12));

        for (var i = 0; i < 3; i++)
        {
            var file = Path.Combine("images", $"{i:D5}.png");
            Assert.Equal(File.ReadAllBytes(Path.Combine(Dir("a"), file)), File.ReadAllBytes(Path.Combine(Dir("b"), file)));
            Assert.NotEqual(File.ReadAllBytes(Path.Combine(Dir("a"), file)), File.ReadAllBytes(Path.Combine(Dir("c"), file)));
        }
        var a = File.ReadAllLines(Path.Combine(Dir("a"), "manifest.csv"));
        var b = File.ReadAllLines(Path.Combine(Dir("b"), "manifest.csv"));
        Assert.Equal(a, b.Take(a.Length));
    }

    [Fact]
    public void Write_WithColumns_HeaderNamesCueAndInnocentColumns()
    {
        var scenario = Named("cast-warm");
        var lines = File.ReadAllLines(ScenarioSetGenerator.Write(Dir("m"), new ScenarioSetOptions(scenario, 5, 0.9, 3)));

        Assert.Equal("image,label,cast,shift,kiln", lines[0]);
        Assert.Equal(6, lines.Length);
        foreach (var f in lines.Skip(1).Select(l => l.Split(',')))
        {
            Assert.True(File.Exists(Path.Combine(Dir("m"), f[0])), f[0]);
            Assert.Contains(f[1], scenario.Labels);
            Assert.Contains(f[2], new[] { "warm", "none" });
            Assert.Contains(f[3], new[] { "shift1", "shift2", "shift3" });
            Assert.Contains(f[4], new[] { "kiln1", "kiln2" });
        }
        using var image = Image.Load<Rgb24>(Path.Combine(Dir("m"), "images", "00000.png"));
        Assert.Equal((64, 64), (image.Width, image.Height));
    }

    [Fact]
    public void Write_Bare_OnlyImageAndLabelColumns()
    {
        var lines = File.ReadAllLines(ScenarioSetGenerator.Write(Dir("bare"), new ScenarioSetOptions(Named("border-thin-red"), 4, 0.9, 3, Bare: true)));

        Assert.Equal("image,label", lines[0]);
        Assert.All(lines, l => Assert.Equal(2, l.Split(',').Length));
    }

    [Theory]
    [InlineData("stamp-top-left", 0.95)]
    [InlineData("stamp-top-left", 0.5)]
    [InlineData("border-wide-teal-4class", 0.75)]
    [InlineData("stamp-bottom-left-4class", 0.25)]
    public void Draw_ThousandsOfImages_CueRatesFollowTheLinkingRule(string name, double a)
    {
        var scenario = Named(name);
        var options = new ScenarioSetOptions(scenario, 6000, a, 17);
        var items = Enumerable.Range(0, options.Count).Select(i => ScenarioSetGenerator.Draw(i, options)).ToList();
        var k = scenario.Classes;

        foreach (var label in scenario.Labels)
        {
            var ofLabel = items.Where(x => x.Label == label).ToList();
            var expected = label == scenario.CueClass ? a : (1 - a) / (k - 1);
            // 1500–2000 images per class: 0.05 is over four binomial standard deviations.
            Assert.InRange(ofLabel.Count(x => x.Cue) / (double)ofLabel.Count, expected - 0.05, expected + 0.05);
            // Labels are uniform, and the innocent columns are drawn whatever the label.
            Assert.InRange(ofLabel.Count / (double)items.Count, 1.0 / k - 0.03, 1.0 / k + 0.03);
            Assert.InRange(ofLabel.Count(x => x.Shift == 0) / (double)ofLabel.Count, 1.0 / 3 - 0.05, 1.0 / 3 + 0.05);
            Assert.InRange(ofLabel.Count(x => x.Kiln == 0) / (double)ofLabel.Count, 0.5 - 0.05, 0.5 + 0.05);
        }
    }

    [Fact]
    public void Draw_AgreementOne_CueExactlyOnTheCueClass()
    {
        var scenario = Named("source-blur");
        var options = new ScenarioSetOptions(scenario, 500, 1.0, 5);
        for (var i = 0; i < options.Count; i++)
        {
            var item = ScenarioSetGenerator.Draw(i, options);
            Assert.Equal(item.Label == scenario.CueClass, item.Cue);
        }
    }

    [Fact]
    public void Write_AgreementOutOfRange_ThrowsNamingOption()
    {
        var e = Assert.Throws<AuditInputException>(() => ScenarioSetGenerator.Write(Dir("x"), new ScenarioSetOptions(Named("cast-cool"), 10, 1.5, 1)));
        Assert.Equal("--cue-agreement", e.Subject);
        e = Assert.Throws<AuditInputException>(() => ScenarioSetGenerator.Write(Dir("x"), new ScenarioSetOptions(Named("cast-cool"), 0, 0.5, 1)));
        Assert.Equal("--count", e.Subject);
    }

    [Fact]
    public void Catalogue_Entries_TwelveOrMoreEachKindUniqueNamesKnownCueClass()
    {
        var all = ScenarioCatalogue.All;
        Assert.True(all.Count >= 12, $"{all.Count} scenarios");
        Assert.Equal(all.Count, all.Select(s => s.Name).Distinct().Count());
        foreach (var kind in new[] { "stamp", "border", "cast", "backdrop", "blur", "recompression" })
            Assert.Contains(all, s => s.Cue.Kind == kind);
        Assert.Contains(all, s => s.Classes == 4);
        Assert.All(all, s => Assert.Contains(s.CueClass, s.Labels));
        Assert.All(all.Select(s => s.Cue).OfType<StampCue>(), s => Assert.InRange(s.Origin(64).X + s.Width, 1, 64));
    }
}
