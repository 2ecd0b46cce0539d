using System.Globalization;
using System.Text.Json.Nodes;
using AuditSvc.Cli.Demo;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Cli.Tests.Audits;

/// <summary>
/// A cue carried by a number: every image of a small invented set is darkened by its own gain (0.35 to 1), written in
/// a numeric column; a second numeric column and a categorical column with empty cells are independent of the
/// pixels. The gain must lead the scan (binned into quartiles, the report says so) and the empty cells must be
/// counted as missing, not as a value, through the whole scan.
/// </summary>
public class NumericCueTests
{
    [Fact]
    public void Audit_BrightnessGainColumn_LeadsTheFindingsAndEmptyCellsAreMissing()
    {
        var dir = CliProcess.TempDir("numeric");
        var demo = DemoSetGenerator.Write(Path.Combine(dir, "demo"), new DemoSetOptions(60, DemoSetOptions.IndependentAgreement, 9));
        var rng = new Random(21);
        var lines = new List<string> { "image,label,gain,decoy,site" };
        int blanks = 0;
        foreach (var row in File.ReadAllLines(demo).Skip(1))
        {
            var cells = row.Split(',');
            double gain = Math.Round(0.35 + 0.65 * rng.NextDouble(), 3);
            using (var img = Image.Load<Rgb24>(Path.Combine(dir, "demo", cells[0])))
            {
                img.ProcessPixelRows(a =>
                {
                    for (int y = 0; y < a.Height; y++)
                        foreach (ref var p in a.GetRowSpan(y))
                            p = new Rgb24((byte)(p.R * gain), (byte)(p.G * gain), (byte)(p.B * gain));
                });
                img.SaveAsPng(Path.Combine(dir, "demo", cells[0]));
            }
            string site = rng.Next(6) == 0 ? "" : rng.Next(2) == 0 ? "north" : "south";
            if (site.Length == 0) blanks++;
            lines.Add(string.Join(",", cells[0], cells[1], gain.ToString(CultureInfo.InvariantCulture),
                Math.Round(rng.NextDouble() * 10, 3).ToString(CultureInfo.InvariantCulture), site));
        }
        var manifest = Path.Combine(dir, "demo", "numeric.csv");
        File.WriteAllLines(manifest, lines);

        var out_ = Path.Combine(dir, "out");
        var (status, _, stderr) = CliProcess.Run("audit", "--model", Path.Combine(AppContext.BaseDirectory, "model-fixtures", "resnet.onnx"),
            "--data", manifest, "--labels", "sound,spotted,mouldy", "--out", out_);
        Assert.True(status is 0 or 1, stderr);
        var json = JsonNode.Parse(File.ReadAllText(Path.Combine(out_, "audit.json")))!;

        var columns = json["image_set"]!["attributes"]!.AsArray();
        var gainColumn = columns.Single(c => (string)c!["name"]! == "gain")!;
        Assert.True((bool)gainColumn["numeric"]!);
        Assert.Equal(4, gainColumn["values"]!.AsArray().Count);
        var siteColumn = columns.Single(c => (string)c!["name"]! == "site")!;
        Assert.Equal(blanks, (int)siteColumn["missing"]!);
        Assert.DoesNotContain(siteColumn["values"]!.AsArray(), v => ((string)v!["value"]!).Length == 0);

        var attributes = json["attributes"]!.AsArray().ToDictionary(a => (string)a!["name"]!, a => a!);
        int gainFindings = (int)attributes["gain"]["findings"]!;
        Assert.True(gainFindings > 0, "no unit follows the planted brightness gain");
        Assert.True(gainFindings > 3 * Math.Max(1, (int)attributes["decoy"]["findings"]!), $"gain {gainFindings}, decoy {(int)attributes["decoy"]["findings"]!}");
        Assert.True(gainFindings > 3 * Math.Max(1, (int)attributes["site"]["findings"]!), $"gain {gainFindings}, site {(int)attributes["site"]["findings"]!}");
        Assert.True((int)attributes["site"]["tests"]! > 0, "the column with empty cells was not scanned");
        var strongest = json["findings"]!.AsArray().OrderByDescending(f => (double)f!["auroc"]!).First()!;
        Assert.Equal("gain", (string)strongest["attribute"]!);

        var html = File.ReadAllText(Path.Combine(out_, "report.html"));
        Assert.Contains("equal-count bins at the set's quartiles", html);
        Assert.Contains("missing, left out of this attribute's tests", html);
    }
}
