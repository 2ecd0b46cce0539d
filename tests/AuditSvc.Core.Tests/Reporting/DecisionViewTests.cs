using System.Text.RegularExpressions;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Reporting;
using AuditSvc.Core.Tests.Audits;

namespace AuditSvc.Core.Tests.Reporting;

public sealed partial class DecisionViewTests
{
    /// <summary>The sample audit with its stamp interventions named and counted, as the engine writes them.</summary>
    private static AuditResult Sample()
    {
        var r = SampleAudit.Create();
        var stamp = r.Attributes[0];
        var measures = stamp.Measures.Select(m => m.Name switch
        {
            "transplant" => m with { Cue = "stamp=yes → blight", TreatedHits = 36, ControlHits = 3, N = 90, Value = 0.37 },
            "occlusion" => m with { Cue = "stamp=yes → blight", TreatedHits = 14, ControlHits = 3 },
            _ => m,
        }).ToList();
        var attributes = r.Attributes.ToList();
        attributes[0] = stamp with { Measures = measures, Cues = [stamp.Cues[0] with { PushesToward = "blight" }] };
        return r with { Attributes = attributes };
    }

    [Fact]
    public void Of_BlockingCue_ComesFirstAndFollows()
    {
        var cards = CueCards.Of(Sample());

        var first = cards[0];
        Assert.Equal(("stamp", "yes", "stamp=yes"), (first.Attribute, first.Value, first.Key));
        Assert.True(first.Follows);
        Assert.Equal("blight", first.PushesToward);
        // The transplant (0.37) blocks on its own; the attribute's gap sits on the card but is not the value's trigger.
        Assert.Equal(["transplant"], first.Triggering.Select(m => m.Name));
        Assert.Equal(CueCards.UnitsShown, first.Units.Count);
        Assert.True(first.Units.Zip(first.Units.Skip(1)).All(p => p.First.Auroc >= p.Second.Auroc), "units are not strongest first");
    }

    [Fact]
    public void Of_AllowedAndPassingAttributes_DoNotFollow()
    {
        var cards = CueCards.Of(Sample());

        Assert.False(cards.Single(c => c.Attribute == "site").Follows);
        Assert.True(cards.Single(c => c.Attribute == "site").Allowed);
        Assert.False(cards.Single(c => c.Key == "backdrop=striped").Follows);
        // A confounded attribute that blocks with no measure still gets its card (attribute-wide).
        var camera = cards.Single(c => c.Attribute == "camera");
        Assert.Null(camera.Value);
        Assert.Equal("camera", camera.Key);
    }

    [Theory]
    [InlineData("stamp=yes → mouldy", "stamp", "yes", "mouldy")]
    [InlineData("site=a=b → x → y", "site", "a=b → x", "y")]
    [InlineData("stamp=no", "stamp", "no", null)]
    public void CueValue_ParsesTheMeasuresCue(string cue, string attribute, string value, string? target)
    {
        Assert.Equal(value, CueCards.CueValue(attribute, cue));
        Assert.Equal(target, CueCards.Target(cue));
        Assert.Null(CueCards.CueValue("other", cue));
    }

    [Fact]
    public void Sentence_Transplant_SaysWhatMovedInPlainWords()
    {
        var r = Sample();
        var m = r.Attributes[0].Measures.Single(x => x.Name == "transplant");

        var s = PlainWords.Sentence(r.Attributes[0], m, r.Groups);

        Assert.Equal("Pasting the region of stamp=yes into 90 images without it moved 36 of 90 to \u201cblight\u201d; pasting the same region from " +
            "same-label images without it moved 3: effect 0.37 (95% interval 0.28 to 0.47).", s);
    }

    [Fact]
    public void Sentence_Gap_UsesTheGroupAccuracies()
    {
        var r = Sample();
        var s = PlainWords.Sentence(r.Attributes[0], r.Attributes[0].Measures[0], r.Groups);

        // aligned: (392 + 45) / (400 + 50) = 97%; conflicting: 112 / 200 = 56%.
        Assert.StartsWith("Across stamp, the model is right on 97% of images whose stamp points to their own label and on 56% of those", s, StringComparison.Ordinal);
    }

    [Fact]
    public void Reasons_LeakageReason_BecomesASentenceNamingTheCue()
    {
        var r = Sample();
        var transplant = r.Attributes[0].Measures.Single(x => x.Name == "transplant");
        r = r with { Reasons = [new VerdictReason("leakage", "stamp", "transplant", transplant.Value, 0.2, "raw"), r.Reasons[1]] };

        var reasons = PlainWords.Reasons(r, CueCards.Of(r));

        Assert.StartsWith("The model's decisions follow stamp=yes: pasting the region of stamp=yes", reasons[0], StringComparison.Ordinal);
        Assert.StartsWith("camera nearly determines the label", reasons[1], StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("/layer2/layer2.1/relu_1/Relu_output_0", "layer2.1 · relu_1 · Relu")]
    [InlineData("/1/Relu_output_0", "step 1 · Relu")]
    [InlineData("/12/Flatten_output_0", "step 12 · Flatten")]
    [InlineData("features.3", "features.3")]
    public void LayerName_ShortensExporterPaths(string tensor, string expected) => Assert.Equal(expected, PlainWords.LayerName(tensor));

    [Fact]
    public void Decision_WithHostView_PutsTheFooterOnEachCardAndLinksUnits()
    {
        var view = new ReportView { UnitHref = (l, u) => $"/u/{u}?layer={l}", CardFooter = c => $"<form data-cue=\"{c.Key}\"></form>" };

        var html = HtmlReport.Decision(Sample(), NoExemplarImages.Instance, view);

        Assert.Contains("<form data-cue=\"stamp=yes\"></form>", html, StringComparison.Ordinal);
        Assert.Contains("href=\"/u/12?layer=layer3/conv2\"", html, StringComparison.Ordinal);
        Assert.Single(Regex.Matches(html, "class=\"verdict-word\""));
        Assert.Contains("id=\"cue-stamp-yes\"", html, StringComparison.Ordinal);
        Assert.Contains("How this was computed", html, StringComparison.Ordinal);
        // Quieter: the allowed site attribute sits apart from the cues the decisions follow.
        Assert.True(html.IndexOf("id=\"cue-site\"", StringComparison.Ordinal) > html.IndexOf("id=\"quiet\"", StringComparison.Ordinal));
        Assert.DoesNotContain(SampleAudit.NastyLabel, html, StringComparison.Ordinal);
    }

    [Fact]
    public void Render_SamePictureTwice_EmbedsItOnce()
    {
        var images = new FixedImages();

        var html = HtmlReport.Render(Sample(), images);

        // Every exemplar of the sample gives the same picture: embedded once, shown many times.
        Assert.Single(Regex.Matches(html, Regex.Escape(FixedImages.Uri)));
        Assert.True(Regex.Matches(html, "class=\"pic p0").Count > 9);
        Assert.DoesNotContain("<img", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Unit_KnownUnit_ShowsGridMakeUpAndInterventions()
    {
        var r = Sample();
        var view = new ReportView { UnitHref = (l, u) => $"/u/{u}?layer={l}" };

        var html = HtmlReport.Unit(r, "layer3/conv2", 12, new FixedImages(), view, whole: false, toggleHref: "/toggle");

        Assert.True(HtmlReport.HasUnit(r, "layer3/conv2", 12));
        Assert.False(HtmlReport.HasUnit(r, "layer3/conv2", 9999));
        Assert.Contains("Show whole images with the peak box", html, StringComparison.Ordinal);
        Assert.Contains("What moving stamp = yes did to the decisions", html, StringComparison.Ordinal);
        Assert.Contains("Pasting the region of stamp=yes", html, StringComparison.Ordinal);
        Assert.Contains("99 × 99 pixels", html, StringComparison.Ordinal); // the layer's receptive field
        Assert.Contains("href=\"/u/11?layer=layer4/conv1\"", html, StringComparison.Ordinal); // a unit sharing its cue
    }

    private sealed class FixedImages : IExemplarImages
    {
        public const string Uri = "data:image/png;base64,iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAIAAACQd1PeAAAADElEQVR4nGP4z8AAAAMBAQDJ/pLvAAAAAElFTkSuQmCC";

        public string? Crop(Exemplar e) => Uri;

        public string? Whole(Exemplar e) => Uri;
    }
}
