using System.Text;
using AuditSvc.Core.Audits;
using static AuditSvc.Core.Reporting.HtmlText;

namespace AuditSvc.Core.Reporting;

public static partial class HtmlReport
{
    /// <summary>Exemplars per unit on a cue card: a small 3×3 grid.</summary>
    private const int CardExemplars = 9;

    /// <summary>
    /// The decision view alone: the verdict once with a sentence per reason, one card per cue (the cues the decisions
    /// follow first), the cues units notice but the decisions do not follow, what was and was not tested, and the
    /// definitions. The service's audit page is this, inside its own frame.
    /// </summary>
    public static string Decision(AuditResult result, IExemplarImages images, ReportView view)
    {
        ArgumentNullException.ThrowIfNull(result);
        ArgumentNullException.ThrowIfNull(images);
        ArgumentNullException.ThrowIfNull(view);
        var pics = new Pictures();
        var sb = new StringBuilder(32 * 1024);
        DecisionView(sb, result, images, view, pics);
        var styles = pics.Styles();
        return styles.Length == 0 ? sb.ToString() : "<style>" + styles + "</style>\n" + sb;
    }

    private static void DecisionView(StringBuilder sb, AuditResult r, IExemplarImages images, ReportView view, Pictures pics)
    {
        var cards = CueCards.Of(r);
        VerdictBand(sb, r, cards);
        var main = cards.Where(c => c.Follows || (c.Report.Verdict == "block" && !cards.Any(o => o.Attribute == c.Attribute && o.Follows))).ToList();
        var quiet = cards.Except(main).ToList();
        sb.Append("<main>\n<section id=\"decide\">\n");
        if (main.Count > 0)
        {
            sb.Append("<h2>Cues the decisions follow (").Append(main.Count).Append(")</h2>\n");
            foreach (var c in main) Card(sb, r, c, images, view, pics);
        }
        else
            sb.Append("<h2>Cues</h2>\n<p class=\"plain-none\">No cue moved the model's decisions enough to block: no intervention or accuracy gap reached its threshold with a clear effect.</p>\n");
        if (quiet.Count > 0)
        {
            sb.Append("<section id=\"quiet\"><h2>Noticed by units, not followed by the decisions (").Append(quiet.Count).Append(")</h2>\n")
              .Append("<p class=\"muted\">Hidden units respond to these values, but moving the value did not move the model's decisions past the threshold. ")
              .Append("Worth knowing; not a reason to block.</p>\n");
            foreach (var c in quiet) QuietCard(sb, c, view);
            sb.Append("</section>\n");
        }
        sb.Append("</section>\n");
        CoverageBlock(sb, r.Coverage);
        Glossary(sb);
        sb.Append("</main>\n");
    }

    private static void VerdictBand(StringBuilder sb, AuditResult r, IReadOnlyList<CueCard> cards)
    {
        sb.Append("<header class=\"verdict ").Append(Class(r.Verdict)).Append("\" id=\"verdict-band\">\n<div class=\"verdict-mark\" aria-hidden=\"true\">")
          .Append(r.Verdict switch { "pass" => "✓", "block" => "✕", _ => "?" }).Append("</div>\n<div>")
          .Append("<div class=\"verdict-word\" id=\"verdict\">").Append(E(r.Verdict.ToUpperInvariant())).Append("</div>\n<div class=\"verdict-text\">");
        var sentences = PlainWords.Reasons(r, cards);
        if (r.Verdict == "pass")
            sb.Append("<p>No cue moved the model's decisions past the policy's threshold. ")
              .Append(Int(r.Attributes.Count)).Append(r.Attributes.Count == 1 ? " attribute was" : " attributes were")
              .Append(" tested; read below what was not.</p>");
        else if (sentences.Count > 0)
        {
            sb.Append("<ul class=\"verdict-reasons\" id=\"reasons\">");
            foreach (var s in sentences) sb.Append("<li>").Append(E(s)).Append("</li>");
            sb.Append("</ul>");
        }
        sb.Append("</div>\n");
        if (r.Reasons.Count > 0)
        {
            sb.Append("<details class=\"tech\"><summary>The reasons as audit.json records them</summary><ul>");
            foreach (var x in r.Reasons) sb.Append("<li><span class=\"mono\">").Append(E(x.Kind)).Append("</span> ").Append(E(x.Message)).Append("</li>");
            sb.Append("</ul></details>");
        }
        sb.Append("</div>\n</header>\n");
    }

    private static void Card(StringBuilder sb, AuditResult r, CueCard c, IExemplarImages images, ReportView view, Pictures pics)
    {
        sb.Append("<article class=\"cuecard").Append(c.Follows ? " follows" : "").Append("\" id=\"").Append(CardAnchor(c.Key)).Append("\">\n<div class=\"cc-head\"><h3>");
        CueTitle(sb, c);
        sb.Append("</h3>");
        Mark(sb, c);
        sb.Append("</div>\n<div class=\"cc-leak\"><span class=\"k\">leakage</span>");
        LeakageBar(sb, c.Leakage, c.Threshold);
        sb.Append("<span class=\"muted small\"> threshold ").Append(Num(c.Threshold)).Append(" (the line)</span></div>\n<ul class=\"plain\">");
        foreach (var m in c.Measures)
        {
            bool blocks = c.Triggering.Contains(m);
            sb.Append("<li").Append(blocks ? " class=\"blocks\"" : "").Append('>').Append(E(PlainWords.Sentence(c.Report, m, r.Groups)));
            if (blocks) sb.Append(" <span class=\"mark-s m-block\">✕ blocks</span>");
            else if (!m.Gating) sb.Append(" <span class=\"mark-s m-info\">◇ description only</span>");
            sb.Append("</li>");
        }
        if (c.Measures.Count == 0) sb.Append("<li class=\"muted\">No behavioural measure could be taken for this cue.</li>");
        if (c.Cue?.Note is { } note) sb.Append("<li class=\"note\">").Append(E(note)).Append("</li>");
        sb.Append("</ul>\n<div class=\"cc-body\">");
        if (c.Cue is { } cue)
        {
            sb.Append("<figure class=\"region\">");
            RegionMap(sb, cue.Region);
            sb.Append("<figcaption>").Append(cue.Region.Kind switch
            {
                "local" => $"Where it sits: {Pct(cue.Region.Share)} of the image (outlined).",
                "global" => $"Spread over {Pct(cue.Region.Share)} of the image: colours moved, no patch.",
                _ => "No pixel differs with the value.",
            }).Append("</figcaption></figure>");
        }
        if (c.Units.Count > 0)
        {
            sb.Append("<div class=\"cc-units\"><h4>Units that notice it most (").Append(Int(c.Units.Count)).Append(" of ").Append(Int(c.UnitCount))
              .Append(")</h4><div class=\"unitgrids\">");
            foreach (var u in c.Units)
            {
                var href = view.UnitHref?.Invoke(u.Layer, u.Unit);
                sb.Append("<figure class=\"unitgrid\"><div class=\"mini\">");
                foreach (var e in u.Exemplars.Take(CardExemplars))
                {
                    var alt = $"{e.Label}, {u.Attribute}={e.Value ?? "none"}";
                    sb.Append(images.Crop(e) is { } src ? pics.Tag(src, alt) : "<span class=\"placeholder\" title=\"image unavailable\"></span>");
                }
                sb.Append("</div><figcaption>");
                if (href is not null) sb.Append("<a href=\"").Append(E(href)).Append("\">");
                sb.Append(E(PlainWords.LayerName(u.Layer))).Append(" · unit ").Append(u.Unit);
                if (href is not null) sb.Append("</a>");
                sb.Append("<br><span class=\"muted\">").Append(Pct(u.ExemplarShare)).Append(" of its top images have it (set: ").Append(Pct(u.BaseRate))
                  .Append(")</span></figcaption></figure>");
            }
            sb.Append("</div></div>");
        }
        else if (c.Inferred) sb.Append("<p class=\"muted small\">Inferred from the units listed under the place patterns of the full report.</p>");
        sb.Append("</div>\n");
        if (view.CardFooter?.Invoke(c) is { Length: > 0 } footer) sb.Append("<div class=\"cc-foot\">").Append(footer).Append("</div>\n");
        sb.Append("</article>\n");
    }

    private static void QuietCard(StringBuilder sb, CueCard c, ReportView view)
    {
        sb.Append("<article class=\"cuecard quiet\" id=\"").Append(CardAnchor(c.Key)).Append("\"><div class=\"cc-head\"><h3>");
        CueTitle(sb, c);
        sb.Append("</h3>");
        Mark(sb, c);
        sb.Append("</div><p class=\"small\">");
        if (c.UnitCount > 0) sb.Append(Int(c.UnitCount)).Append(c.UnitCount == 1 ? " unit notices it. " : " units notice it. ");
        var top = c.Measures.Where(m => m.Gating).OrderByDescending(m => m.Value).FirstOrDefault();
        sb.Append(top is null
            ? "No behavioural measure was taken."
            : $"Largest effect: {PlainWords.MeasureName(top.Name)} {Num(top.Value)} (95% interval {Num(top.Low)} to {Num(top.High)}), threshold {Num(c.Threshold)}.");
        if (c.Units.FirstOrDefault() is { } u && view.UnitHref?.Invoke(u.Layer, u.Unit) is { } href)
            sb.Append(" <a href=\"").Append(E(href)).Append("\">Its strongest unit</a>.");
        sb.Append("</p>");
        if (view.CardFooter?.Invoke(c) is { Length: > 0 } footer) sb.Append("<div class=\"cc-foot\">").Append(footer).Append("</div>");
        sb.Append("</article>\n");
    }

    private static void CueTitle(StringBuilder sb, CueCard c)
    {
        sb.Append("<span class=\"cue\">").Append(E(c.Attribute));
        if (c.Value is not null) sb.Append(" = ").Append(E(c.Value));
        sb.Append("</span>");
        if (c.Inferred) sb.Append(" <span class=\"tag\">inferred place cue</span>");
        if (c.PushesToward is not null) sb.Append(" <span class=\"toward\">pushes toward <strong>").Append(E(c.PushesToward)).Append("</strong></span>");
    }

    private static void Mark(StringBuilder sb, CueCard c)
    {
        var (cls, text) = c switch
        {
            { Allowed: true } => ("m-info", "◇ allowed by the policy"),
            { Follows: true } => ("m-block", "✕ blocks the release"),
            { Report.Verdict: "block" } => ("m-block", "✕ blocks: confounded"),
            _ => ("m-pass", "○ not followed"),
        };
        sb.Append("<span class=\"cc-mark ").Append(cls).Append("\">").Append(text).Append("</span>");
    }

    private static void Glossary(StringBuilder sb)
    {
        sb.Append("<details class=\"glossary\" id=\"how\"><summary>How this was computed</summary><dl>");
        foreach (var (term, definition) in PlainWords.Glossary)
            sb.Append("<dt>").Append(E(term)).Append("</dt><dd>").Append(E(definition)).Append("</dd>");
        sb.Append("</dl></details>\n");
    }

    /// <summary>The id of a cue card (<c>cue-stamp-yes</c>), so pages and reviews can link to it.</summary>
    public static string CardAnchor(string key) => "cue-" + Anchor(key);
}
