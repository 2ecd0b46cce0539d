using AuditSvc.Cli.Scenarios;

namespace AuditSvc.Cli.Tests.Scenarios;

/// <summary>The `scenario-set` command as a pipeline runs it: the built binary in its own process.</summary>
public sealed class ScenarioSetCommandTests
{
    [Fact]
    public void ScenarioSet_List_PrintsEveryScenarioAndSaysInvented()
    {
        var (status, stdout, _) = CliProcess.Run("scenario-set", "--list");

        Assert.Equal(0, status);
        Assert.Contains("Invented", stdout);
        foreach (var s in ScenarioCatalogue.All) Assert.Contains(s.Name, stdout);
    }

    [Fact]
    public void ScenarioSet_Bare_ManifestHasTwoColumns()
    {
        var dir = CliProcess.TempDir("scen-bare");
        var (status, _, err) = CliProcess.Run("scenario-set", "--scenario", "stamp-top-edge", "--out", dir, "--count", "6",
            "--cue-agreement", "0.75", "--seed", "4", "--bare");

        Assert.True(status == 0, err);
        var lines = File.ReadAllLines(Path.Combine(dir, "manifest.csv"));
        Assert.Equal("image,label", lines[0]);
        Assert.Equal(7, lines.Length);
        Assert.All(lines, l => Assert.Equal(2, l.Split(',').Length));
        Assert.Equal(6, Directory.GetFiles(Path.Combine(dir, "images"), "*.png").Length);
    }

    [Fact]
    public void ScenarioSet_CueOn_EveryRowCarriesTheCue()
    {
        var dir = CliProcess.TempDir("scen-on");
        var (status, _, err) = CliProcess.Run("scenario-set", "--scenario", "source-blur", "--out", dir, "--count", "8", "--cue", "on");

        Assert.True(status == 0, err);
        Assert.All(File.ReadAllLines(Path.Combine(dir, "manifest.csv")).Skip(1), l => Assert.Equal("blurred", l.Split(',')[2]));
    }

    [Theory]
    [InlineData("--scenario", "--scenario", "no-such-scenario", "--out", "DIR")]
    [InlineData("--scenario", "--out", "DIR")]
    [InlineData("--out", "--scenario", "cast-warm")]
    [InlineData("--count", "--scenario", "cast-warm", "--out", "DIR", "--count", "0")]
    [InlineData("--cue-agreement", "--scenario", "cast-warm", "--out", "DIR", "--cue-agreement", "1.2")]
    [InlineData("--cue", "--scenario", "cast-warm", "--out", "DIR", "--cue", "sideways")]
    [InlineData("--seed", "--scenario", "cast-warm", "--out", "DIR", "--seed", "seven")]
    public void ScenarioSet_BadOption_ExitsTwoNamingIt(string option, params string[] args)
    {
        var dir = CliProcess.TempDir("scen-bad");
        var (status, _, err) = CliProcess.Run(["scenario-set", .. args.Select(a => a == "DIR" ? dir : a)]);

        Assert.Equal(2, status);
        Assert.Contains(option, err);
        Assert.False(File.Exists(Path.Combine(dir, "manifest.csv")));
    }
}
