using System.Diagnostics;
using AuditSvc.Compute.Reporting;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Models;
using AuditSvc.Core.Reporting;
using AuditSvc.Core.Tests.Audits;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;
using Xunit.Abstractions;

namespace AuditSvc.Cli.Tests.Reporting;

/// <summary>Opens a written report from disk in headless Chromium, as a reviewer would, with no network.</summary>
public sealed class ReportBrowserTests(ITestOutputHelper output) : IDisposable
{
    private readonly string _dir = Directory.CreateTempSubdirectory("auditsvc-report-").FullName;

    public void Dispose() => Directory.Delete(_dir, true);

    private static string? FindChromium()
    {
        var path = Environment.GetEnvironmentVariable("AUDITSVC_CHROMIUM");
        if (string.IsNullOrWhiteSpace(path)) path = "/usr/bin/chromium";
        return File.Exists(path) ? path : null;
    }

    /// <summary>Chromium's path, or null after saying why the test does nothing (it fails instead under CI=true).</summary>
    private string? ChromiumOrSkip()
    {
        var chromium = FindChromium();
        if (chromium is not null) return chromium;
        const string message = "Chromium not found (set AUDITSVC_CHROMIUM or install Debian's chromium); browser check not run.";
        Assert.False(string.Equals(Environment.GetEnvironmentVariable("CI"), "true", StringComparison.OrdinalIgnoreCase), message);
        output.WriteLine("SKIPPED: " + message);
        return null;
    }

    /// <summary>Invented exemplar images: a leaf-green gradient with a dark corner stamp where the sample's boxes sit.</summary>
    private string WriteReport()
    {
        var images = Path.Combine(_dir, "images");
        Directory.CreateDirectory(images);
        for (int i = 0; i < 9; i++)
        {
            using var img = new Image<Rgb24>(256, 256);
            for (int y = 0; y < 256; y++)
                for (int x = 0; x < 256; x++)
                    img[x, y] = new Rgb24((byte)(40 + x / 4 + i * 8), (byte)(110 + y / 3), (byte)(50 + i * 10));
            if (i % 4 != 0)
                for (int y = 14; y < 60; y++)
                    for (int x = 170; x < 226; x++)
                        img[x, y] = (x + y) % 9 < 5 ? new Rgb24(30, 30, 40) : new Rgb24(240, 240, 240);
            img.SaveAsPng(Path.Combine(images, $"{i * 7}.png"));
        }
        // Items the folder lacks exercise the report's placeholder.
        var pictures = new ExemplarImages(item => Path.Combine(images, $"{item}.png"), InputRecipe.Default(224, 224));
        var html = HtmlReport.Render(SampleAudit.Create(), pictures);
        var path = Path.Combine(_dir, "report.html");
        File.WriteAllText(path, html);
        return path;
    }

    private (int Exit, string Stdout, string Stderr) RunChromium(string chromium, string page, params string[] extra)
    {
        var psi = new ProcessStartInfo(chromium) { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        foreach (var a in new[]
                 {
                     "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking",
                     "--disable-component-update", "--disable-sync", "--user-data-dir=" + Directory.CreateDirectory(Path.Combine(_dir, "profile-" + Guid.NewGuid().ToString("N"))).FullName,
                     "--window-size=1280,2400",
                 }.Concat(extra))
            psi.ArgumentList.Add(a);
        psi.ArgumentList.Add(new Uri(page).AbsoluteUri);
        using var p = Process.Start(psi)!;
        var stdout = p.StandardOutput.ReadToEndAsync();
        var stderr = p.StandardError.ReadToEndAsync();
        // A hang guard, not a timing assertion: a browser that never returns fails the test instead of the run.
        if (!p.WaitForExit(TimeSpan.FromMinutes(3)))
        {
            p.Kill(entireProcessTree: true);
            Assert.Fail("Chromium did not finish within 3 minutes");
        }
        p.WaitForExit();
        return (p.ExitCode, stdout.Result, stderr.Result);
    }

    [Fact]
    public void Screenshot_WrittenReport_RendersVerdictBandAndContent()
    {
        if (ChromiumOrSkip() is not { } chromium) return;
        var page = WriteReport();
        var png = Path.Combine(_dir, "report.png");
        var (exit, _, stderr) = RunChromium(chromium, page, "--screenshot=" + png);
        Assert.True(File.Exists(png), $"no screenshot (exit {exit}): {stderr}");
        using var shot = Image.Load<Rgb24>(png);
        Assert.Equal(1280, shot.Width);

        // Mostly not blank: a good share of pixels differs from the white page.
        long inked = 0, total = 0;
        for (int y = 0; y < shot.Height; y += 4)
            for (int x = 0; x < shot.Width; x += 4, total++)
                if (shot[x, y] is var p && (p.R < 235 || p.G < 235 || p.B < 235)) inked++;
        output.WriteLine($"inked share {inked / (double)total:P1}");
        Assert.True(inked > total / 20, $"only {inked} of {total} sampled pixels are not white");

        // The inline style applied: the top band carries the palette's block colour (--block #9e2a1e, docs/ui.md).
        var band = shot[640, 20];
        Assert.Equal(new Rgb24(0x9e, 0x2a, 0x1e), band);

        // For a person to look at: AUDITSVC_REPORT_SCREENSHOT=/some/file.png keeps the picture and the page beside it.
        var keep = Environment.GetEnvironmentVariable("AUDITSVC_REPORT_SCREENSHOT");
        if (!string.IsNullOrEmpty(keep))
        {
            File.Copy(png, keep, overwrite: true);
            File.Copy(page, Path.ChangeExtension(keep, ".html"), overwrite: true);
        }
    }

    [Fact]
    public void DumpDom_WrittenReport_ContainsVerdictText()
    {
        if (ChromiumOrSkip() is not { } chromium) return;
        var page = WriteReport();
        var (exit, dom, stderr) = RunChromium(chromium, page, "--dump-dom");
        Assert.True(exit == 0, $"exit {exit}: {stderr}");
        Assert.Contains("id=\"verdict\">BLOCK</div>", dom, StringComparison.Ordinal);
        Assert.Contains("cannot prove that no shortcut exists", dom, StringComparison.Ordinal);
        Assert.Contains("&lt;b&gt;&amp;\"x\"", dom, StringComparison.Ordinal); // the label stayed text, not markup
    }
}
