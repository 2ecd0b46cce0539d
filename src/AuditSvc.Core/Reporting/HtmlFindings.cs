using System.Globalization;
using System.Text;
using AuditSvc.Core.Audits;
using static AuditSvc.Core.Reporting.HtmlText;

namespace AuditSvc.Core.Reporting;

public static partial class HtmlReport
{
    /// <summary>Exemplars drawn per unit (Zeiler &amp; Fergus show nine).</summary>
    private const int ExemplarsShown = 9;

    private static void Findings(StringBuilder sb, AuditResult r, IExemplarImages images, Pictures pics)
    {
        sb.Append("<section id=\"findings\"><h2>Findings (").Append(Int(r.Findings.Count)).Append(")</h2>\n")
          .Append("<p class=\"muted\">Units whose scores, ranked within each label, are higher on images with the cue (van Elteren test, ")
          .Append("Benjamini–Hochberg q). A finding shows what a unit notices; the leakage measures above show whether the decisions follow it.</p>\n");
        if (r.Findings.Count == 0)
        {
            sb.Append("<p class=\"muted\">No findings.</p></section>\n");
            return;
        }
        foreach (var f in r.Findings.Take(MaxFindings)) Finding(sb, f, images, pics);
        if (r.Findings.Count > MaxFindings)
            sb.Append("<p class=\"more\">").Append(Int(r.Findings.Count - MaxFindings)).Append(" more finding")
              .Append(r.Findings.Count - MaxFindings == 1 ? "" : "s").Append(" in audit.json (this page shows the first ").Append(MaxFindings).Append(").</p>\n");
        sb.Append("</section>\n");
    }

    private static void Finding(StringBuilder sb, Finding f, IExemplarImages images, Pictures pics)
    {
        sb.Append("<article class=\"finding\" id=\"f-").Append(Anchor(f.Layer)).Append('-').Append(f.Unit).Append("\">\n<h3><span class=\"mono\">")
          .Append(E(f.Layer)).Append(" / unit ").Append(f.Unit).Append("</span> <span class=\"cue\">").Append(E(f.Attribute)).Append('=').Append(E(f.Value))
          .Append("</span>").Append(f.Allowed ? " <span class=\"tag\">allowed</span>" : "").Append("</h3>\n")
          .Append("<div class=\"stats\">")
          .Append(Stat("AUROC", Num(f.Auroc))).Append(Stat("q", P(f.QValue))).Append(Stat("odds ratio", Num(f.OddsRatio, 1)))
          .Append(Stat("region", E(f.Region))).Append(Stat("z", Num(f.Z, 1)))
          .Append("</div>\n<div class=\"finding-body\">\n");
        ExemplarGrid(sb, f.Exemplars, images, pics);
        sb.Append("<div class=\"side\">");
        PeakMap(sb, f.PeakGrid);
        sb.Append("<h4>Exemplar make-up</h4><dl class=\"grid tight\">")
          .Append("<dt>Share with ").Append(E(f.Value)).Append("</dt><dd>").Append(Pct(f.ExemplarShare))
          .Append("</dd><dt>Base rate</dt><dd>").Append(Pct(f.BaseRate))
          .Append("</dd><dt>Lift</dt><dd>").Append(Num(f.Lift, 1))
          .Append("</dd><dt>Tail p</dt><dd>").Append(P(f.ExemplarTailP)).Append("</dd></dl>");
        if (f.ExemplarGroups.Count > 0)
        {
            sb.Append("<h4>Exemplars by label × value</h4><table class=\"inner\"><thead><tr><th>label</th><th>")
              .Append(E(f.Attribute)).Append("</th><th class=\"num\">n</th></tr></thead><tbody>");
            foreach (var g in f.ExemplarGroups)
                sb.Append("<tr><td>").Append(E(g.Label)).Append("</td><td>").Append(g.Value is null ? Dash : E(g.Value))
                  .Append("</td><td class=\"num\">").Append(Int(g.Count)).Append("</td></tr>");
            sb.Append("</tbody></table>");
        }
        sb.Append("</div>\n</div>\n</article>\n");
    }

    private static void Candidates(StringBuilder sb, AuditResult r, IExemplarImages images, Pictures pics)
    {
        sb.Append("<section id=\"candidates\"><h2>Patterns at one fixed place</h2>\n")
          .Append("<p class=\"muted\">Several live units peaking at the same place across images of several labels point to a cue nobody labelled (a stamp, a frame, a ruler). ")
          .Append("Unless a column explains it, the pattern becomes an inferred attribute (an image carries it when the most bimodal of those units scores above Otsu's split) ")
          .Append("and is measured like a column: see its row under attributes.</p>\n");
        if (r.Candidates.Count == 0)
        {
            sb.Append("<p class=\"muted\">None.</p></section>\n");
            return;
        }
        foreach (var c in r.Candidates)
        {
            sb.Append("<article class=\"finding\"><h3><span class=\"cue\">").Append(E(c.Name)).Append("</span> <span class=\"mono small\">")
              .Append(E(c.Layer)).Append(" / unit ").Append(c.Unit).Append("</span>");
            if (c.ExplainedBy is not null) sb.Append(" <span class=\"tag\">explained by ").Append(E(c.ExplainedBy)).Append("</span>");
            else if (c.Attribute is null) sb.Append(" <span class=\"tag\">too few images on one side to measure</span>");
            sb.Append("</h3>\n<div class=\"stats\">").Append(Stat("agreeing units", Int(Math.Max(c.AgreeingUnits, c.UnitRefs.Count)))).Append(Stat("place share", Pct(c.PlaceShare)))
              .Append(Stat("labels", Int(c.LabelsCovered))).Append(Stat("split", Num(c.Split))).Append(Stat("separability", Num(c.Separability)))
              .Append(Stat("images carrying it", Int(c.Carriers)))
              .Append("</div>\n<p class=\"mono small\">").Append(E(string.Join(", ", c.UnitRefs))).Append("</p>\n<div class=\"finding-body\">");
            // Whole images: for a fixed-place pattern the point is where on the image it fires.
            ExemplarGrid(sb, c.Exemplars, images, pics, whole: true);
            sb.Append("</div></article>\n");
        }
        sb.Append("</section>\n");
    }

    private static void ExemplarGrid(StringBuilder sb, IReadOnlyList<Exemplar> exemplars, IExemplarImages images, Pictures pics, bool whole = false)
    {
        sb.Append(whole ? "<div class=\"exemplars whole\">" : "<div class=\"exemplars\">");
        foreach (var e in exemplars.Take(ExemplarsShown))
        {
            var src = whole ? images.Whole(e) : images.Crop(e);
            sb.Append("<figure title=\"").Append(E(e.Image)).Append(" · box ").Append(e.Box.X).Append(',').Append(e.Box.Y).Append(' ')
              .Append(e.Box.Width).Append('×').Append(e.Box.Height).Append("\">");
            if (src is null) sb.Append("<div class=\"placeholder\">image unavailable</div>");
            else sb.Append(pics.Tag(src, (whole ? "" : "peak of ") + Path.GetFileName(e.Image)));
            sb.Append("<figcaption><span class=\"lbl\">").Append(E(e.Label)).Append("</span> · ").Append(e.Value is null ? Dash : E(e.Value))
              .Append("<br><span class=\"muted\">").Append(Num(e.Score)).Append("</span></figcaption></figure>");
        }
        sb.Append("</div>\n");
    }

    /// <summary>Where the top-n peak centres fall on the 3×3 grid of the input, as shades of one colour.</summary>
    private static void PeakMap(StringBuilder sb, int[] grid)
    {
        sb.Append("<h4>Peak map</h4><div class=\"peakmap\" role=\"img\" aria-label=\"peak centres per ninth of the image\">");
        int max = grid.Length == 0 ? 0 : grid.Max();
        for (int i = 0; i < 9; i++)
        {
            int n = i < grid.Length ? grid[i] : 0;
            double a = max == 0 ? 0 : (double)n / max;
            sb.Append("<span style=\"background:rgba(47,93,98,").Append((0.06 + 0.84 * a).ToString("0.00", CultureInfo.InvariantCulture))
              .Append(");color:").Append(a > 0.5 ? "#fff" : "#2b2621").Append("\">").Append(n).Append("</span>");
        }
        sb.Append("</div>");
    }

    private static string Stat(string name, string value) =>
        $"<span class=\"stat\"><span class=\"k\">{name}</span><span class=\"v\">{value}</span></span>";

    private static string Anchor(string s) =>
        new(s.Select(c => char.IsAsciiLetterOrDigit(c) ? c : '-').ToArray());
}
