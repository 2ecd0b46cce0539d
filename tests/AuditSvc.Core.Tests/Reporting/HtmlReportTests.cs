using System.Text.RegularExpressions;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Reporting;
using AuditSvc.Core.Tests.Audits;

namespace AuditSvc.Core.Tests.Reporting;

public sealed partial class HtmlReportTests
{
    /// <summary>Pictures for every other exemplar, so both the image and the placeholder paths render.</summary>
    private sealed class FakeImages : IExemplarImages
    {
        // A 1×1 PNG (common practice: the smallest valid PNG), as a data URI.
        public const string Png = "data:image/png;base64,iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mP8z8BQDwAEhQGAhKmMIQAAAABJRU5ErkJggg==";

        public string? Crop(Exemplar e) => e.Item % 2 == 0 ? Png : null;

        public string? Whole(Exemplar e) => null;
    }

    private static string Render(AuditResult? r = null) => HtmlReport.Render(r ?? SampleAudit.Create(), new FakeImages());

    [Fact]
    public void Render_BlockingResult_ShowsVerdictInHeader()
    {
        var html = Render();
        Assert.Contains("<div class=\"verdict-word\" id=\"verdict\">BLOCK</div>", html, StringComparison.Ordinal);
        Assert.Contains("verdict v-block", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_PassingResult_ShowsPass()
    {
        var html = Render(SampleAudit.Create() with { Verdict = "pass", Reasons = [] });
        Assert.Contains(">PASS</div>", html, StringComparison.Ordinal);
        Assert.Contains("verdict v-pass", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_Sample_ListsEveryAttribute()
    {
        var r = SampleAudit.Create();
        var html = Render(r);
        foreach (var a in r.Attributes) Assert.Contains("<strong>" + a.Name + "</strong>", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_Sample_ShowsCautionsBeforeAttributes()
    {
        var r = SampleAudit.Create();
        var html = Render(r);
        int cautions = html.IndexOf("id=\"coverage\"", StringComparison.Ordinal);
        Assert.True(cautions > 0);
        Assert.True(cautions < html.IndexOf("id=\"attributes\"", StringComparison.Ordinal));
        foreach (var c in r.Coverage.Cautions) Assert.Contains(c.Replace("'", "&#39;", StringComparison.Ordinal), html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_NoEngineCautions_StillSaysAnAuditCannotProveAbsence()
    {
        var r = SampleAudit.Create();
        var html = Render(r with { Coverage = r.Coverage with { Cautions = [] } });
        Assert.Contains("cannot prove that no shortcut exists", html, StringComparison.Ordinal);
        Assert.Contains("validation and licensed practice", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_LabelWithMarkup_IsEscaped()
    {
        var html = Render();
        Assert.DoesNotContain(SampleAudit.NastyLabel, html, StringComparison.Ordinal);
        Assert.Contains("&lt;b&gt;&amp;&quot;x&quot;", html, StringComparison.Ordinal);
        Assert.DoesNotContain("<stem>", html, StringComparison.Ordinal); // model file name
        Assert.DoesNotContain("x<y>.png", html, StringComparison.Ordinal); // problem row file
    }

    [Fact]
    public void Render_Sample_HasNoExternalReferences()
    {
        var html = Render();
        Assert.DoesNotContain("http://", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("https://", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("<script src", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("<link", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("@import", html, StringComparison.OrdinalIgnoreCase);
        // Every src is an inline data URI.
        foreach (Match m in SrcAttribute().Matches(html)) Assert.StartsWith("data:image/png;base64,", m.Groups[1].Value, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_MoreFindingsThanShown_CapsAndSaysHowManyMore()
    {
        var html = Render(SampleAudit.Create(findings: 33));
        Assert.Equal(HtmlReport.MaxFindings, Regex.Matches(html, "<article class=\"finding\" id=\"f-").Count);
        Assert.Contains("3 more findings in audit.json", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_ManyProblemRows_ListsFirstFiftyWithCount()
    {
        var r = SampleAudit.Create();
        var html = Render(r);
        Assert.Contains($"Rows skipped at intake ({r.ImageSet.Problems.Count})", html, StringComparison.Ordinal);
        Assert.Contains($"First {HtmlReport.MaxProblems} of {r.ImageSet.Problems.Count} shown", html, StringComparison.Ordinal);
        Assert.DoesNotContain("broken_55.png", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_UnreadableImages_ShowPlaceholders()
    {
        var html = HtmlReport.Render(SampleAudit.Create(findings: 1), NoExemplarImages.Instance);
        Assert.Contains("image unavailable", html, StringComparison.Ordinal);
        Assert.DoesNotContain("<img", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_NonFiniteStatistics_ShowDashOrInfinity()
    {
        var html = Render();
        Assert.Contains("∞", html, StringComparison.Ordinal); // the infinite odds ratio
        Assert.DoesNotContain("NaN", html, StringComparison.Ordinal);
        Assert.DoesNotContain("Infinity", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_EmptyResult_StillRenders()
    {
        var r = SampleAudit.Create(findings: 0) with { Attributes = [], CueGroups = [], Candidates = [], Groups = [], Reasons = [], Verdict = "pass" };
        var html = Render(r);
        Assert.Contains("No findings.", html, StringComparison.Ordinal);
        Assert.EndsWith("</html>\n", html, StringComparison.Ordinal);
    }

    [GeneratedRegex("src=\"([^\"]*)\"")]
    private static partial Regex SrcAttribute();
}
