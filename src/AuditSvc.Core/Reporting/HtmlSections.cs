using System.Text;
using AuditSvc.Core.Audits;
using static AuditSvc.Core.Reporting.HtmlText;

namespace AuditSvc.Core.Reporting;

public static partial class HtmlReport
{
    private static void Attributes(StringBuilder sb, AuditResult r)
    {
        sb.Append("<section id=\"attributes\"><h2>Attributes and leakage</h2>\n")
          .Append("<p class=\"muted\">Leakage is the largest behavioural effect of an attribute, 0 to 1: the accuracy gap between cue-aligned and cue-conflicting images, ")
          .Append("and, for each value units respond to, treated − control rates of paired interventions (transplant, occlusion or colour transfer). ")
          .Append("A measure blocks when it reaches the threshold (the line on each bar), its test rejects \u201cno effect\u201d after adjustment across the audit, and its interval lies above 0.</p>\n");
        if (r.Attributes.Count == 0)
        {
            sb.Append("<p class=\"muted\">The image set has no attribute columns.</p></section>\n");
            return;
        }
        sb.Append("<table class=\"attrs\"><thead><tr><th>Attribute</th><th class=\"num\">Cramér's V</th><th>Confounded</th><th>Allowed</th>")
          .Append("<th>Leakage</th><th class=\"num\">Threshold</th><th>Verdict</th><th>Measures</th></tr></thead><tbody>\n");
        foreach (var a in r.Attributes)
        {
            sb.Append("<tr><td><strong>").Append(E(a.Name)).Append("</strong>");
            if (a.Note is not null) sb.Append("<div class=\"note\">").Append(E(a.Note)).Append("</div>");
            sb.Append("<div class=\"muted small\">").Append(Int(a.Tests)).Append(" tests, ").Append(Int(a.Findings)).Append(" findings</div>");
            if (r.ImageSet.Attributes.FirstOrDefault(x => x.Name == a.Name) is { } column)
            {
                // How a number became values, and what happened to empty cells: a reviewer must see both to read the findings.
                if (column.Numeric)
                    sb.Append("<div class=\"muted small\">numeric column, binned into ").Append(Int(column.Values.Count))
                      .Append(" equal-count bins at the set's quartiles: ").Append(E(string.Join(", ", column.Values.Select(v => v.Value)))).Append("</div>");
                if (column.Missing > 0)
                    sb.Append("<div class=\"muted small\">").Append(Int(column.Missing)).Append(" empty cell").Append(column.Missing == 1 ? "" : "s")
                      .Append(": missing, left out of this attribute's tests (not a value)</div>");
            }
            sb.Append("</td>")
              .Append("<td class=\"num\">").Append(Num(a.CramersV)).Append("</td>")
              .Append("<td>").Append(a.Confounded ? "<span class=\"tag warn\">yes</span>" : "no").Append("</td>")
              .Append("<td>").Append(a.Allowed ? "<span class=\"tag\">allowed</span>" : "no").Append("</td>")
              .Append("<td class=\"leak\">");
            LeakageBar(sb, a.Leakage, a.Threshold);
            sb.Append("</td><td class=\"num\">").Append(Num(a.Threshold)).Append("</td>")
              .Append("<td><span class=\"pill ").Append(Class(a.Verdict)).Append("\">").Append(E(a.Verdict)).Append("</span></td><td>");
            Measures(sb, a.Measures);
            CueRegionsOf(sb, a);
            sb.Append("</td></tr>\n");
        }
        sb.Append("</tbody></table></section>\n");
    }

    private static void LeakageBar(StringBuilder sb, double? leakage, double threshold)
    {
        bool over = leakage is { } l && double.IsFinite(l) && l >= threshold;
        sb.Append("<div class=\"bar\" role=\"img\" aria-label=\"leakage ").Append(Num(leakage)).Append("\">")
          .Append("<span class=\"fill").Append(over ? " over" : "").Append("\" style=\"width:").Append(Width(leakage)).Append("\"></span>")
          .Append("<span class=\"mark\" style=\"left:").Append(Width(threshold)).Append("\"></span></div>")
          .Append("<span class=\"leak-num").Append(over ? " over" : "").Append("\">").Append(leakage is null ? "not measured" : Num(leakage)).Append("</span>");
    }

    private static void Measures(StringBuilder sb, IReadOnlyList<Measure> measures)
    {
        if (measures.Count == 0)
        {
            sb.Append("<span class=\"muted\">none measured</span>");
            return;
        }
        sb.Append("<table class=\"inner\"><thead><tr><th>measure</th><th class=\"num\">effect</th><th class=\"num\">n</th><th class=\"num\">95% interval</th><th class=\"num\">p</th><th class=\"num\">adjusted p</th></tr></thead><tbody>");
        foreach (var m in measures)
        {
            sb.Append("<tr><td>").Append(E(m.Name)).Append(m.Cue is null ? "" : " <span class=\"cue\">" + E(m.Cue) + "</span>")
              .Append(m.Gating ? "" : " <span class=\"tag\">description only</span>").Append("</td><td class=\"num\">").Append(Num(m.Value))
              .Append("</td><td class=\"num\">").Append(Int(m.N)).Append("</td><td class=\"num\">").Append(Interval(m.Low, m.High))
              .Append("</td><td class=\"num\">").Append(P(m.PValue)).Append("</td><td class=\"num\">").Append(P(m.QValue)).Append("</td></tr>")
              .Append("<tr class=\"detail\"><td colspan=\"6\" class=\"small muted\">").Append(E(m.Detail)).Append("</td></tr>");
        }
        sb.Append("</tbody></table>");
    }

    private static void CueGroups(StringBuilder sb, AuditResult r)
    {
        sb.Append("<section id=\"cues\"><h2>Cues the units respond to</h2>\n");
        if (r.CueGroups.Count == 0)
        {
            sb.Append("<p class=\"muted\">No unit concentrates on an attribute value beyond what the label explains.</p></section>\n");
            return;
        }
        sb.Append("<table><thead><tr><th>Cue</th><th class=\"num\">Units</th><th>Layers</th><th class=\"num\">Best AUROC</th><th>Region</th></tr></thead><tbody>\n");
        foreach (var g in r.CueGroups)
        {
            sb.Append("<tr><td><span class=\"cue\">").Append(E(g.Attribute)).Append('=').Append(E(g.Value)).Append("</span></td><td class=\"num\">")
              .Append(Int(g.Units)).Append("</td><td class=\"mono small\">").Append(E(string.Join(", ", g.Layers))).Append("</td><td class=\"num\">")
              .Append(Num(g.BestAuroc)).Append("</td><td>").Append(E(g.Region)).Append("</td></tr>\n");
        }
        sb.Append("</tbody></table></section>\n");
    }

    private static void Groups(StringBuilder sb, AuditResult r)
    {
        sb.Append("<section id=\"groups\"><h2>Accuracy by group</h2>\n")
          .Append("<p class=\"muted\">Cue-aligned: the attribute value pushes the model toward the image's own label; cue-conflicting: toward another class; neutral: toward none. ")
          .Append("A model that follows the cue is right on aligned groups and wrong on conflicting ones.</p>\n");
        if (r.Groups.Count == 0)
        {
            sb.Append("<p class=\"muted\">No (label, value) group was large enough.</p></section>\n");
            return;
        }
        sb.Append("<table><thead><tr><th>Attribute</th><th>Label</th><th>Value</th><th class=\"num\">n</th><th class=\"num\">Accuracy</th><th></th><th>Cue</th></tr></thead><tbody>\n");
        foreach (var g in r.Groups)
        {
            sb.Append("<tr><td>").Append(E(g.Attribute)).Append("</td><td>").Append(E(g.Label)).Append("</td><td>").Append(E(g.Value))
              .Append("</td><td class=\"num\">").Append(Int(g.N)).Append("</td><td class=\"num\">").Append(Pct(g.Accuracy, 1))
              .Append("</td><td class=\"acc\"><div class=\"bar thin\"><span class=\"fill neutral\" style=\"width:").Append(Width(g.Accuracy))
              .Append("\"></span></div></td><td>").Append(g.Relation == "conflicting" ? "<strong>conflicting</strong>" : E(g.Relation)).Append("</td></tr>\n");
        }
        sb.Append("</tbody></table></section>\n");
    }

    private static void Problems(StringBuilder sb, AuditResult r)
    {
        sb.Append("<section id=\"problems\"><h2>Intake and pass problems</h2>\n");
        ProblemTable(sb, "Rows skipped at intake", r.ImageSet.Problems);
        ProblemTable(sb, "Images that failed in the activation run", r.Pass.Problems);
        sb.Append("</section>\n");
    }

    private static void ProblemTable(StringBuilder sb, string title, IReadOnlyList<ProblemRow> rows)
    {
        sb.Append("<h3>").Append(title).Append(" (").Append(Int(rows.Count)).Append(")</h3>\n");
        if (rows.Count == 0)
        {
            sb.Append("<p class=\"muted\">None.</p>\n");
            return;
        }
        sb.Append("<table class=\"compact\"><thead><tr><th class=\"num\">Row</th><th>File</th><th>Reason</th></tr></thead><tbody>\n");
        foreach (var p in rows.Take(MaxProblems))
        {
            sb.Append("<tr><td class=\"num\">").Append(p.Row is { } n ? Int(n) : Dash).Append("</td><td class=\"mono\">").Append(E(p.File))
              .Append("</td><td>").Append(E(p.Reason)).Append("</td></tr>\n");
        }
        sb.Append("</tbody></table>\n");
        if (rows.Count > MaxProblems)
            sb.Append("<p class=\"muted\">First ").Append(MaxProblems).Append(" of ").Append(Int(rows.Count)).Append(" shown; audit.json lists all.</p>\n");
    }

    private static void Policy(StringBuilder sb, AuditResult r)
    {
        var p = r.Policy;
        sb.Append("<section id=\"policy\"><h2>Policy used</h2><dl class=\"grid\">")
          .Append("<dt>Leakage threshold</dt><dd>").Append(Num(p.LeakageThreshold)).Append("</dd>")
          .Append("<dt>Per-attribute thresholds</dt><dd>")
          .Append(p.AttributeThresholds.Count == 0 ? "none" : E(string.Join(", ", p.AttributeThresholds.Select(kv => $"{kv.Key} = {Num(kv.Value)}"))))
          .Append("</dd><dt>Allowed attributes</dt><dd>").Append(p.AllowedAttributes.Count == 0 ? "none" : E(string.Join(", ", p.AllowedAttributes)))
          .Append("</dd><dt>False discovery rate</dt><dd>").Append(Num(p.FdrLevel))
          .Append("</dd><dt>Smallest finding AUROC</dt><dd>").Append(Num(p.MinAuroc))
          .Append("</dd><dt>Smallest group</dt><dd>").Append(Int(p.MinGroupSize))
          .Append("</dd><dt>Smallest side per label</dt><dd>").Append(Int(p.MinPerSide))
          .Append("</dd><dt>Confounded at Cramér's V ≥</dt><dd>").Append(Num(p.ConfoundedV)).Append(" (then ")
          .Append(p.Confounded == Gate.ConfoundedAction.Block ? "block" : "warn").Append(')')
          .Append("</dd><dt>Intervention budget</dt><dd>").Append(Int(p.InterventionBudget)).Append(" runs per attribute")
          .Append("</dd><dt>Largest leakage rise</dt><dd>").Append(p.MaxLeakageRise is null ? "off" : Num(p.MaxLeakageRise))
          .Append("</dd></dl></section>\n");
    }

    private static void PassBlock(StringBuilder sb, AuditResult r)
    {
        var p = r.Pass;
        sb.Append("<section id=\"run\"><h2>Activation run</h2><p class=\"muted\">The run of every image through the model that produced the unit scores.</p><dl class=\"grid\">")
          .Append("<dt>Images</dt><dd>").Append(Int(p.Images)).Append(" (").Append(Int(p.Scored)).Append(" scored)")
          .Append("</dd><dt>Throughput</dt><dd>").Append(Num(p.ImagesPerSecond, 1)).Append(" images/s over ").Append(Num(p.Seconds, 1)).Append(" s")
          .Append("</dd><dt>Batch size</dt><dd>").Append(Int(p.BatchSize))
          .Append("</dd><dt>Units read</dt><dd>").Append(Int(p.Units)).Append(", top ").Append(Int(p.TopN)).Append(" exemplars each")
          .Append("</dd><dt>Intervention runs</dt><dd>").Append(Int(p.InterventionRuns)).Append(" in ").Append(Num(p.InterventionSeconds, 1)).Append(" s")
          .Append(r.Phases is { } t
              ? $"</dd><dt>Time per phase</dt><dd>{(t.Intake is { } i ? $"intake {Num(i, 1)} s, " : "")}activation run {Num(t.Pass, 1)} s, analysis {Num(t.Analysis, 1)} s, interventions {Num(t.Interventions, 1)} s"
              : "")
          .Append("</dd></dl></section>\n");
    }
}
