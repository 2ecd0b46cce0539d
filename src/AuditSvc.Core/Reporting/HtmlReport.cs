using System.Text;
using AuditSvc.Core.Audits;
using static AuditSvc.Core.Reporting.HtmlText;

namespace AuditSvc.Core.Reporting;

/// <summary>
/// Renders an audit as one self-contained HTML page (inline style and images, no scripts, no external
/// references) that a reviewer opens from disk: verdict and reasons first, then what was and was not tested,
/// the attributes' leakage, the findings with their exemplars, and the details a second reviewer needs.
/// </summary>
public static partial class HtmlReport
{
    /// <summary>Findings drawn in the page; the rest are listed in audit.json.</summary>
    public const int MaxFindings = 30;

    /// <summary>Problem rows listed per table; the count says how many there are.</summary>
    public const int MaxProblems = 50;

    /// <summary>The id of a finding's article in the page, so other pages can link to it (<c>#f-…</c>).</summary>
    public static string FindingAnchor(string layer, int unit) =>
        $"f-{Anchor(layer)}-{unit.ToString(System.Globalization.CultureInfo.InvariantCulture)}";

    public static string Render(AuditResult result, IExemplarImages images) => Render(result, images, ReportView.Standalone);

    public static string Render(AuditResult result, IExemplarImages images, ReportView view)
    {
        ArgumentNullException.ThrowIfNull(result);
        ArgumentNullException.ThrowIfNull(images);
        ArgumentNullException.ThrowIfNull(view);
        var pics = new Pictures();
        var body = new StringBuilder(64 * 1024);
        // The decision first (verdict, cue cards, scope), then the details a second reviewer needs.
        DecisionView(body, result, images, view, pics);
        body.Append("<main class=\"details\">\n<h2 class=\"part\" id=\"details\">Details</h2>\n");
        Header(body, result);
        Contents(body, result);
        Attributes(body, result);
        CueGroups(body, result);
        Findings(body, result, images, pics);
        Candidates(body, result, images, pics);
        Groups(body, result);
        Problems(body, result);
        Policy(body, result);
        PassBlock(body, result);
        body.Append("</main>\n<footer>").Append(E(result.Tool)).Append(" · schema ").Append(E(result.SchemaVersion))
          .Append(" · ").Append(E(result.CreatedAt.ToString("yyyy-MM-dd HH:mm:ss zzz", System.Globalization.CultureInfo.InvariantCulture)))
          .Append(" · the full record is audit.json</footer>\n");

        var sb = new StringBuilder(body.Length + 16 * 1024);
        sb.Append("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
          .Append("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n")
          .Append("<title>Audit ").Append(E(result.Verdict)).Append(" — ").Append(E(Path.GetFileName(result.Model.Path))).Append("</title>\n")
          .Append("<style>").Append(ReportStyles.Css).Append(pics.Styles()).Append("</style>\n</head>\n<body>\n")
          .Append(body).Append("</body>\n</html>\n");
        return sb.ToString();
    }

    private static void Header(StringBuilder sb, AuditResult r)
    {
        var m = r.Model;
        var s = r.ImageSet;
        int rejected = s.RowsRead - s.RowsUsed;
        sb.Append("<section class=\"summary\">\n<div class=\"card\"><h2>Model</h2><dl>")
          .Append("<dt>File</dt><dd class=\"mono\">").Append(E(m.Path)).Append("</dd>")
          .Append("<dt>SHA-256</dt><dd class=\"mono\" title=\"").Append(E(m.Sha256)).Append("\">").Append(E(Short(m.Sha256))).Append("…</dd>")
          .Append("<dt>Input</dt><dd>").Append(m.InputWidth).Append(" × ").Append(m.InputHeight).Append(", ").Append(E(m.Resize))
          .Append(", ").Append(E(m.ChannelOrder)).Append("</dd>")
          .Append("<dt>Classes</dt><dd>").Append(E(string.Join(", ", m.ClassNames))).Append("</dd>")
          .Append("<dt>Layers read</dt><dd>").Append(Int(m.Layers.Count)).Append(" (").Append(Int(r.Pass.Units)).Append(" units)</dd>");
        // Crops that are not the whole story: token patches under attention, places fed by a global gate.
        foreach (var g in m.Layers.Where(l => l.Layout != "vector" && l.Place.Length > 0 && l.Place != "receptive field of the peak position").GroupBy(l => (l.Layout, l.Place)))
            sb.Append("<dt>Crops</dt><dd>").Append(Int(g.Count())).Append(' ').Append(E(g.Key.Layout)).Append(" layer").Append(g.Count() == 1 ? "" : "s")
              .Append(": ").Append(E(g.Key.Place)).Append("</dd>");
        foreach (var note in m.Notes) sb.Append("<dt>Intake</dt><dd>").Append(E(note)).Append("</dd>");
        sb.Append("</dl></div>\n");
        sb.Append("<div class=\"card\"><h2>Image set</h2><dl>")
          .Append("<dt>Source</dt><dd class=\"mono\">").Append(E(s.Source)).Append("</dd>")
          .Append("<dt>Images used</dt><dd><strong>").Append(Int(s.RowsUsed)).Append("</strong> of ").Append(Int(s.RowsRead)).Append(" rows</dd>")
          .Append("<dt>Rejected</dt><dd>").Append(Int(rejected)).Append(rejected > 0 ? " (<a href=\"#problems\">see problems</a>)" : "").Append("</dd>")
          .Append("<dt>Scored</dt><dd>").Append(Int(r.Pass.Scored)).Append(" of ").Append(Int(r.Pass.Images)).Append(" sent to the model</dd>")
          .Append("<dt>Labels</dt><dd>").Append(E(string.Join(", ", s.Labels.Select(l => $"{l.Value} ({l.Count})")))).Append("</dd>")
          .Append("</dl></div>\n</section>\n");
        Layers(sb, m);
    }

    /// <summary>The layers read, in the order the graph computes them, each with a short name beside its tensor.</summary>
    private static void Layers(StringBuilder sb, ModelSummary m)
    {
        sb.Append("<section id=\"layers\"><h2>Layers read (").Append(Int(m.Layers.Count)).Append(")</h2>\n<table class=\"compact\"><thead><tr><th>Layer</th><th>Tensor</th>")
          .Append("<th>Operator</th><th class=\"num\">Units</th><th class=\"num\">Places</th><th class=\"num\">Receptive field</th></tr></thead><tbody>\n");
        foreach (var l in m.Layers)
            sb.Append("<tr><td>").Append(E(PlainWords.LayerName(l.Name))).Append("</td><td class=\"mono\">").Append(E(l.Name)).Append("</td><td>")
              .Append(E(l.OpType)).Append("</td><td class=\"num\">").Append(Int(l.Channels)).Append("</td><td class=\"num\">").Append(l.Height).Append(" × ").Append(l.Width)
              .Append("</td><td class=\"num\">").Append(Num(l.FieldX.Size, 0)).Append(" × ").Append(Num(l.FieldY.Size, 0)).Append(" px</td></tr>\n");
        sb.Append("</tbody></table></section>\n");
    }

    private static void Contents(StringBuilder sb, AuditResult r)
    {
        sb.Append("<nav><a href=\"#verdict-band\">Verdict</a><a href=\"#decide\">Cues</a><a href=\"#coverage\">Scope and cautions</a><a href=\"#attributes\">Attributes</a>")
          .Append("<a href=\"#cues\">Cues</a><a href=\"#findings\">Findings (").Append(Int(r.Findings.Count)).Append(")</a>")
          .Append("<a href=\"#candidates\">Fixed-place patterns</a><a href=\"#groups\">Group accuracy</a><a href=\"#problems\">Problems</a>")
          .Append("<a href=\"#policy\">Policy</a><a href=\"#run\">Activation run</a></nav>\n");
    }

    private static void CoverageBlock(StringBuilder sb, Coverage c)
    {
        sb.Append("<section id=\"coverage\" class=\"cautions\"><h2>What this audit can and cannot tell you</h2>\n<div class=\"cols\">")
          .Append("<div><h3>Tested</h3>");
        List(sb, c.Tested, "No attribute could be tested.");
        sb.Append("</div><div><h3>Not tested</h3>");
        List(sb, c.NotTested, "Nothing listed.");
        sb.Append("</div></div>\n<h3>Cautions</h3><ul class=\"caution-list\">");
        foreach (var x in c.Cautions) sb.Append("<li>").Append(E(x)).Append("</li>");
        // Stated whatever the engine wrote (unless it already did): the page must never read as a certificate of absence.
        if (!c.Cautions.Any(x => x.Contains("prove", StringComparison.OrdinalIgnoreCase)))
            sb.Append("<li>An audit can show that a model relies on a cue; it cannot prove that no shortcut exists.</li>");
        if (!c.Cautions.Any(x => x.Contains("validation", StringComparison.OrdinalIgnoreCase)))
            sb.Append("<li>For safety-relevant uses, this audit does not replace the domain's own validation and licensed practice; defer to them.</li>");
        sb.Append("</ul></section>\n");
    }

    private static void List(StringBuilder sb, IReadOnlyList<string> items, string empty)
    {
        if (items.Count == 0)
        {
            sb.Append("<p class=\"muted\">").Append(empty).Append("</p>");
            return;
        }
        sb.Append("<ul>");
        foreach (var x in items) sb.Append("<li>").Append(E(x)).Append("</li>");
        sb.Append("</ul>");
    }
}
