using AuditSvc.Cli.Demo;
using AuditSvc.Cli.Scenarios;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Cli.Tests.Scenarios;

/// <summary>Counterfactual twins: forcing the cue on or off changes the cue's pixels and nothing else.</summary>
public sealed class ScenarioTwinsTests
{
    private const int Size = 64;

    public static TheoryData<string> StampScenarios() => Names(s => s.Cue is StampCue);

    public static TheoryData<string> BorderScenarios() => Names(s => s.Cue is BorderCue);

    public static TheoryData<string> EveryScenario() => Names(_ => true);

    [Theory]
    [MemberData(nameof(StampScenarios))]
    public void Render_StampOnAgainstOff_OnlyPixelsInsideItsBoxDiffer(string name)
    {
        var scenario = ScenarioCatalogue.Find(name)!;
        var stamp = (StampCue)scenario.Cue;
        var (x0, y0) = stamp.Origin(Size);
        foreach (var (on, off) in Twins(scenario, seed: 31, images: 6))
        {
            var changedInBox = 0;
            for (var y = 0; y < Size; y++)
            {
                for (var x = 0; x < Size; x++)
                {
                    var inBox = x >= x0 && x < x0 + stamp.Width && y >= y0 && y < y0 + stamp.Height;
                    if (!inBox) Assert.Equal(off[x, y], on[x, y]);
                    else if (!on[x, y].Equals(off[x, y])) changedInBox++;
                }
            }
            // The dark ground alone covers the rim of the box, so at least that many pixels change.
            Assert.True(changedInBox >= 2 * (stamp.Width + stamp.Height) - 4, $"{name}: {changedInBox} pixels changed in the box");
        }
    }

    [Theory]
    [MemberData(nameof(BorderScenarios))]
    public void Render_BorderOnAgainstOff_OnlyTheFrameDiffers(string name)
    {
        var scenario = ScenarioCatalogue.Find(name)!;
        var width = ((BorderCue)scenario.Cue).Width;
        foreach (var (on, off) in Twins(scenario, seed: 32, images: 4))
        {
            for (var y = 0; y < Size; y++)
            {
                for (var x = 0; x < Size; x++)
                {
                    var inFrame = Math.Min(Math.Min(x, y), Math.Min(Size - 1 - x, Size - 1 - y)) < width;
                    if (!inFrame) Assert.Equal(off[x, y], on[x, y]);
                }
            }
        }
    }

    [Fact]
    public void Render_StripesOnAgainstOff_TileCentreUnchanged()
    {
        // The stripes lie on the belt behind the tile; the tile is never smaller than 20 px across, centred within 25..39.
        var scenario = ScenarioCatalogue.All.First(s => s.Cue is BackdropCue);
        foreach (var (on, off) in Twins(scenario, seed: 33, images: 6))
        {
            var beltChanged = 0;
            for (var y = 0; y < Size; y++)
            {
                for (var x = 0; x < Size; x++)
                {
                    if (x is >= 30 and < 34 && y is >= 30 and < 34) Assert.Equal(off[x, y], on[x, y]);
                    else if (x < 4 && !on[x, y].Equals(off[x, y])) beltChanged++;
                }
            }
            Assert.True(beltChanged > 100, $"{beltChanged} belt pixels changed at the left edge");
        }
    }

    [Theory]
    [MemberData(nameof(EveryScenario))]
    public void Render_CueForcedOff_SameAsDrawnWithoutCue(string name)
    {
        var scenario = ScenarioCatalogue.Find(name)!;
        var drawn = new ScenarioSetOptions(scenario, 40, 0.5, 34);
        var forcedOff = drawn with { CueMode = CueOverride.Off };
        var forcedOn = drawn with { CueMode = CueOverride.On };
        var checkedOff = 0;
        for (var i = 0; i < 40 && checkedOff < 3; i++)
        {
            var item = ScenarioSetGenerator.Draw(i, drawn);
            if (item.Cue) continue;
            using var plain = ScenarioSetGenerator.Render(item, scenario, 34);
            using var off = ScenarioSetGenerator.Render(ScenarioSetGenerator.Draw(i, forcedOff), scenario, 34);
            using var on = ScenarioSetGenerator.Render(ScenarioSetGenerator.Draw(i, forcedOn), scenario, 34);
            Assert.Equal(Pixels(plain), Pixels(off));
            Assert.NotEqual(Pixels(plain), Pixels(on));
            checkedOff++;
        }
        Assert.Equal(3, checkedOff);
    }

    private static IEnumerable<(Image<Rgb24> On, Image<Rgb24> Off)> Twins(Scenario scenario, int seed, int images)
    {
        var options = new ScenarioSetOptions(scenario, images, 0.5, seed);
        for (var i = 0; i < images; i++)
        {
            var item = ScenarioSetGenerator.Draw(i, options);
            using var on = ScenarioSetGenerator.Render(item with { Cue = true }, scenario, seed);
            using var off = ScenarioSetGenerator.Render(item with { Cue = false }, scenario, seed);
            yield return (on, off);
        }
    }

    private static Rgb24[] Pixels(Image<Rgb24> image)
    {
        var pixels = new Rgb24[image.Width * image.Height];
        image.CopyPixelDataTo(pixels);
        return pixels;
    }

    private static TheoryData<string> Names(Func<Scenario, bool> which)
    {
        var data = new TheoryData<string>();
        foreach (var s in ScenarioCatalogue.All.Where(which)) data.Add(s.Name);
        return data;
    }
}
