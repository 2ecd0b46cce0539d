using AuditSvc.Core.Activations;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;

namespace AuditSvc.Core.Analysis;

/// <summary>
/// Accuracy per (label, attribute value) group, described with the direction read off all of the model's decisions
/// (<see cref="CueDirection.Of(ItemTable, ActivationResult, int)"/>): an image is cue-aligned when its value pushes toward its own label,
/// cue-conflicting when only toward other classes, neutral when toward none. The groups are description; the measure
/// that can block is <see cref="AccuracyGap"/>, which learns the direction on one half of the set and measures on the other.
/// </summary>
public static class GroupAccuracyAnalysis
{
    public static (List<GroupAccuracy> Groups, Measure? Gap) Compute(
        ItemTable table, ActivationResult act, AttributeLink link, AuditPolicy policy)
    {
        int a = link.Attribute, labels = table.Labels.Count, vc = table.Attributes[a].Values.Count;
        var labelOf = new int[table.Items.Count];
        var values = new int[table.Items.Count];
        foreach (var item in table.Items)
        {
            labelOf[item.Index] = item.Label;
            values[item.Index] = act.Scored[item.Index] ? item.AttributeValues[a] : -1;
        }
        var direction = CueDirection.Of(values, act.Predicted, vc, act.ClassCount, null);
        var pushes = direction.Any() ? direction.Pushes : AccuracyGap.LabelMix(labelOf, values, labels, vc, act.ClassCount);
        var n = new int[labels, vc];
        var correct = new int[labels, vc];
        foreach (var item in table.Items)
        {
            int v = values[item.Index];
            if (v < 0) continue;
            n[item.Label, v]++;
            if (act.Predicted[item.Index] == item.Label) correct[item.Label, v]++;
        }
        var groups = new List<GroupAccuracy>();
        for (int k = 0; k < labels; k++)
            for (int v = 0; v < vc; v++)
            {
                if (n[k, v] < policy.MinGroupSize) continue;
                string relation = AccuracyGap.Relation(pushes, v, k) switch { 1 => "aligned", -1 => "conflicting", _ => "neutral" };
                groups.Add(new GroupAccuracy(table.Attributes[a].Name, table.Labels[k], table.Attributes[a].Values[v], n[k, v], correct[k, v], correct[k, v] / (double)n[k, v], relation));
            }
        return (groups, AccuracyGap.Compute(labelOf, values, act.Predicted, labels, vc, act.ClassCount));
    }
}
