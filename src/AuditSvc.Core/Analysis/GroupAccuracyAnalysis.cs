using AuditSvc.Core.Activations;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Analysis;

/// <summary>
/// Accuracy per (label, attribute value) group, and the gap between cue-aligned and cue-conflicting images.
/// Which classes a value pushes toward is read off the model's decisions (<see cref="CueDirection.Of"/>): an
/// image is cue-aligned when its value pushes toward its own label, cue-conflicting when only toward other classes,
/// and neutral (left out of the gap) when toward none. The set's label mix would do for a set where the cue follows the
/// label, but says nothing on a balanced set, which is the best set to audit on. The gap is taken within each label and pooled with Mantel–Haenszel
/// weights (a stratified risk difference), so label mix cannot fake or hide it; its significance is the
/// Cochran–Mantel–Haenszel test of correct × aligned stratified by label, with the common odds ratio.
/// </summary>
public static class GroupAccuracyAnalysis
{
    public static (List<GroupAccuracy> Groups, Measure? Gap) Compute(
        ItemTable table, ActivationResult act, AttributeLink link, AuditPolicy policy)
    {
        var direction = CueDirection.Of(table, act, link.Attribute);
        var pushes = direction.Pushes;
        int a = link.Attribute, labels = table.Labels.Count, vc = table.Attributes[a].Values.Count;
        var n = new int[labels, vc];
        var correct = new int[labels, vc];
        foreach (var item in table.Items)
        {
            int v = item.AttributeValues[a];
            if (!act.Scored[item.Index] || v < 0) continue;
            n[item.Label, v]++;
            if (act.Predicted[item.Index] == item.Label) correct[item.Label, v]++;
        }
        // When no value moves the model's decisions, the set's label mix gives the direction instead (a value is
        // aligned where it is over-represented in the label), so the attribute still gets a measured gap and interval.
        bool fromModel = direction.Any();
        if (!fromModel) pushes = LabelMixPushes(n, labels, vc, act.ClassCount);
        var groups = new List<GroupAccuracy>();
        var tables = new List<Table2x2>();
        double wSum = 0, wDiff = 0, wVar = 0;
        int used = 0;
        for (int k = 0; k < labels; k++)
        {
            int n1 = 0, c1 = 0, n2 = 0, c2 = 0;
            for (int v = 0; v < vc; v++)
            {
                if (n[k, v] == 0) continue;
                bool toOwn = k < pushes.GetLength(1) && pushes[v, k], toOther = false;
                for (int c = 0; c < pushes.GetLength(1); c++) toOther |= c != k && pushes[v, c];
                string relation = toOwn ? "aligned" : toOther ? "conflicting" : "neutral";
                if (n[k, v] >= policy.MinGroupSize)
                    groups.Add(new GroupAccuracy(table.Attributes[a].Name, table.Labels[k], table.Attributes[a].Values[v], n[k, v], correct[k, v], correct[k, v] / (double)n[k, v], relation));
                if (relation == "aligned") { n1 += n[k, v]; c1 += correct[k, v]; }
                else if (relation == "conflicting") { n2 += n[k, v]; c2 += correct[k, v]; }
            }
            if (n1 < policy.MinGroupSize || n2 < policy.MinGroupSize) continue;
            double p1 = c1 / (double)n1, p2 = c2 / (double)n2, w = n1 * (double)n2 / (n1 + n2);
            wSum += w;
            wDiff += w * (p1 - p2);
            wVar += w * w * (p1 * (1 - p1) / n1 + p2 * (1 - p2) / n2);
            used += n1 + n2;
            tables.Add(new Table2x2(c1, n1 - c1, c2, n2 - c2));
        }
        if (wSum == 0) return (groups, null);
        double gap = wDiff / wSum, se = Math.Sqrt(wVar) / wSum;
        double? p = null;
        string detail = "accuracy(aligned) − accuracy(conflicting), within label, Mantel–Haenszel weights; direction from "
            + (fromModel ? "the model's decisions" : "the set's label mix (no value moves the model's decisions)");
        if (tables.Count > 0)
        {
            var cmh = CochranMantelHaenszel.Test(tables.ToArray(), continuityCorrection: true);
            p = cmh.PValue;
            detail += $"; CMH χ² {cmh.ChiSquare:0.##}, common odds ratio {cmh.CommonOddsRatio:0.##}";
        }
        return (groups, new Measure("accuracy_gap", gap, used, gap - 1.96 * se, gap + 1.96 * se, p, detail));
    }

    /// <summary>A value pushes toward a label when it is over-represented in it (lift above 1).</summary>
    private static bool[,] LabelMixPushes(int[,] n, int labels, int vc, int classes)
    {
        var pushes = new bool[vc, Math.Max(classes, labels)];
        int total = 0;
        var perLabel = new int[labels];
        var perValue = new int[vc];
        for (int k = 0; k < labels; k++)
            for (int v = 0; v < vc; v++) { total += n[k, v]; perLabel[k] += n[k, v]; perValue[v] += n[k, v]; }
        for (int k = 0; k < labels; k++)
            for (int v = 0; v < vc; v++)
                pushes[v, k] = perValue[v] > 0 && perLabel[k] > 0 && n[k, v] / (double)perValue[v] > perLabel[k] / (double)total;
        return pushes;
    }
}
