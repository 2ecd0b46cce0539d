using System.Globalization;
using System.Text;
using AuditSvc.Core.Audits;
using static AuditSvc.Core.Reporting.HtmlText;

namespace AuditSvc.Core.Reporting;

public static partial class HtmlReport
{
    /// <summary>True when the audit has a page for this unit: it has findings or is a place pattern's unit.</summary>
    public static bool HasUnit(AuditResult result, string layer, int unit)
    {
        ArgumentNullException.ThrowIfNull(result);
        return result.Findings.Any(f => f.Layer == layer && f.Unit == unit) || result.Candidates.Any(c => c.Layer == layer && c.Unit == unit);
    }

    /// <summary>
    /// One unit's page body: its exemplars (peak crops, or whole images with the peak box when <paramref name="whole"/>),
    /// the make-up of its top images against the set, its peak map, the interventions run on the cues it notices,
    /// and the other units that notice them. <paramref name="toggleHref"/> switches between the two views.
    /// </summary>
    public static string Unit(AuditResult result, string layer, int unit, IExemplarImages images, ReportView view, bool whole, string? toggleHref)
    {
        ArgumentNullException.ThrowIfNull(result);
        ArgumentNullException.ThrowIfNull(images);
        ArgumentNullException.ThrowIfNull(view);
        var pics = new Pictures();
        var sb = new StringBuilder(16 * 1024);
        var findings = result.Findings.Where(f => f.Layer == layer && f.Unit == unit).ToList();
        var places = result.Candidates.Where(c => c.Layer == layer && c.Unit == unit).ToList();
        var summary = result.Model.Layers.FirstOrDefault(l => l.Name == layer);

        sb.Append("<h1>").Append(E(PlainWords.LayerName(layer))).Append(" · unit ").Append(unit.ToString(CultureInfo.InvariantCulture)).Append("</h1>\n")
          .Append("<p class=\"muted\">Tensor <span class=\"mono\">").Append(E(layer)).Append("</span>, channel ").Append(unit.ToString(CultureInfo.InvariantCulture));
        if (summary is not null)
            sb.Append(". One position of this layer sees ").Append(Num(summary.FieldX.Size, 0)).Append(" × ").Append(Num(summary.FieldY.Size, 0))
              .Append(" pixels of the ").Append(result.Model.InputWidth).Append(" × ").Append(result.Model.InputHeight).Append(" input (its receptive field); exemplars are cropped to it");
        sb.Append(".</p>\n");
        if (toggleHref is not null)
            sb.Append("<p><a class=\"toggle\" href=\"").Append(E(toggleHref)).Append("\">")
              .Append(whole ? "Show the peak crops" : "Show whole images with the peak box").Append("</a></p>\n");

        foreach (var f in findings)
        {
            var key = $"{f.Attribute}={f.Value}";
            sb.Append("<section class=\"unit-cue\"><h2>Notices <span class=\"cue\">").Append(E(f.Attribute)).Append(" = ").Append(E(f.Value)).Append("</span>")
              .Append(f.Allowed ? " <span class=\"tag\">allowed</span>" : "").Append("</h2>\n<p>Within each label, it scores an image with ")
              .Append(E(key)).Append(" above one without it ").Append(Pct(f.Auroc)).Append(" of the time (AUROC ").Append(Num(f.Auroc))
              .Append(", q ").Append(P(f.QValue)).Append("). ").Append(Pct(f.ExemplarShare)).Append(" of its top images have the value, against ")
              .Append(Pct(f.BaseRate)).Append(" of the set.</p>\n<div class=\"finding-body\">");
            ExemplarGrid(sb, f.Exemplars, images, pics, whole);
            sb.Append("<div class=\"side\">");
            PeakMap(sb, f.PeakGrid);
            MakeUp(sb, f, result);
            sb.Append("</div></div>\n");
            Interventions(sb, result, f.Attribute, f.Value);
            Siblings(sb, result, f.Attribute, f.Value, layer, unit, view);
            sb.Append("</section>\n");
        }
        foreach (var c in places)
        {
            sb.Append("<section class=\"unit-cue\"><h2>Peaks at one fixed place: <span class=\"cue\">").Append(E(c.Name)).Append("</span></h2>\n<p>")
              .Append(Int(Math.Max(c.AgreeingUnits, c.UnitRefs.Count))).Append(" live units peak at the ").Append(E(c.Region)).Append(" across ")
              .Append(Int(c.LabelsCovered)).Append(" labels; ").Append(Int(c.Carriers)).Append(" images score above this unit's split.</p>");
            ExemplarGrid(sb, c.Exemplars, images, pics, whole: true);
            if (c.Attribute is { } inferred) Interventions(sb, result, inferred, "yes");
            sb.Append("</section>\n");
        }
        var styles = pics.Styles();
        return styles.Length == 0 ? sb.ToString() : "<style>" + styles + "</style>\n" + sb;
    }

    private static void MakeUp(StringBuilder sb, Finding f, AuditResult r)
    {
        sb.Append("<h4>Top images against the set</h4><div class=\"makeup\"><span class=\"k\">top images with ").Append(E(f.Value)).Append("</span>")
          .Append("<div class=\"bar\"><span class=\"fill over\" style=\"width:").Append(Width(f.ExemplarShare)).Append("\"></span></div><span>")
          .Append(Pct(f.ExemplarShare)).Append("</span><span class=\"k\">whole set</span><div class=\"bar\"><span class=\"fill neutral\" style=\"width:")
          .Append(Width(f.BaseRate)).Append("\"></span></div><span>").Append(Pct(f.BaseRate)).Append("</span></div>");
        if (f.ExemplarGroups.Count == 0) return;
        int total = f.ExemplarGroups.Sum(g => g.Count);
        sb.Append("<table class=\"inner\"><thead><tr><th>label</th><th>").Append(E(f.Attribute)).Append("</th><th class=\"num\">top images</th><th class=\"num\">share of the set</th></tr></thead><tbody>");
        foreach (var g in f.ExemplarGroups)
        {
            var labelCount = r.ImageSet.Labels.FirstOrDefault(l => l.Value == g.Label)?.Count;
            sb.Append("<tr><td>").Append(E(g.Label)).Append("</td><td>").Append(g.Value is null ? Dash : E(g.Value)).Append("</td><td class=\"num\">")
              .Append(Int(g.Count)).Append(" (").Append(Pct(total == 0 ? 0 : (double)g.Count / total)).Append(")</td><td class=\"num\">")
              .Append(labelCount is { } n && r.ImageSet.RowsUsed > 0 ? Pct((double)n / r.ImageSet.RowsUsed) + " with this label" : Dash).Append("</td></tr>");
        }
        sb.Append("</tbody></table>");
    }

    private static void Interventions(StringBuilder sb, AuditResult r, string attribute, string value)
    {
        var a = r.Attributes.FirstOrDefault(x => x.Name == attribute);
        sb.Append("<h3>What moving ").Append(E(attribute)).Append(" = ").Append(E(value)).Append(" did to the decisions</h3>");
        var measures = a?.Measures.Where(m => m.Cue is null || CueCards.CueValue(attribute, m.Cue) == value).ToList() ?? [];
        if (a is null || measures.Count == 0)
        {
            sb.Append("<p class=\"muted\">No intervention was run on this value.</p>");
            return;
        }
        sb.Append("<p class=\"muted small\">Interventions move the cue's region in the images, not this unit; these are the runs on the cue it notices.</p><ul class=\"plain\">");
        foreach (var m in measures) sb.Append("<li>").Append(E(PlainWords.Sentence(a, m, r.Groups))).Append("</li>");
        sb.Append("</ul>");
    }

    private static void Siblings(StringBuilder sb, AuditResult r, string attribute, string value, string layer, int unit, ReportView view)
    {
        var group = r.CueGroups.FirstOrDefault(g => g.Attribute == attribute && g.Value == value);
        if (group is null || view.UnitHref is null) return;
        var self = $"{layer}#{unit.ToString(CultureInfo.InvariantCulture)}";
        var links = new List<string>();
        foreach (var reference in group.UnitRefs.Where(u => u != self))
        {
            int hash = reference.LastIndexOf('#');
            if (hash <= 0 || !int.TryParse(reference.AsSpan(hash + 1), NumberStyles.None, CultureInfo.InvariantCulture, out var other)) continue;
            var l = reference[..hash];
            if (!HasUnit(r, l, other) || view.UnitHref(l, other) is not { } href) continue;
            links.Add($"<a href=\"{E(href)}\">{E(PlainWords.LayerName(l))} · unit {other.ToString(CultureInfo.InvariantCulture)}</a>");
        }
        if (links.Count == 0) return;
        sb.Append("<h3>Other units that notice it (").Append(Int(group.Units - 1)).Append(")</h3><p class=\"siblings\">").Append(string.Join(" · ", links));
        if (group.Units - 1 > links.Count) sb.Append(" <span class=\"muted\">and ").Append(Int(group.Units - 1 - links.Count)).Append(" more in audit.json</span>");
        sb.Append("</p>");
    }
}
