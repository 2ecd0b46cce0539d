using AuditSvc.Core.Activations;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;

namespace AuditSvc.Core.Analysis;

/// <summary>Which cues the intervention pass takes up, and the class each pushes toward.</summary>
public static class CueTargets
{
    /// <summary>
    /// Every value of a column with findings (most findings first), and the "yes" of every place cue. Allowed attributes
    /// are skipped: they never block, so their runs would be spent for nothing. The class a value pushes toward is read
    /// off all of the model's decisions: the interventions are new runs with a matched control, so choosing the class on
    /// the pass's predictions does not bias them.
    /// </summary>
    public static List<CueTarget> Choose(ItemTable table, ActivationResult act, AnalysisResult analysis, IReadOnlyList<PlaceCue> places, AuditPolicy policy)
    {
        ArgumentNullException.ThrowIfNull(table);
        ArgumentNullException.ThrowIfNull(analysis);
        ArgumentNullException.ThrowIfNull(places);
        ArgumentNullException.ThrowIfNull(policy);
        var targets = new List<CueTarget>();
        var directions = new Dictionary<int, CuePushes>();
        int Pushed(int attribute, int value) =>
            (directions.TryGetValue(attribute, out var d) ? d : directions[attribute] = CueDirection.Of(table, act, attribute)).PushedClass(value);
        foreach (var cue in analysis.Findings.GroupBy(f => (f.Attribute, f.Value)).OrderByDescending(g => g.Count()).ThenBy(g => g.Key))
        {
            if (policy.IsAllowed(table.Attributes[cue.Key.Attribute].Name)) continue;
            targets.Add(new CueTarget(cue.Key.Attribute, cue.Key.Value, Pushed(cue.Key.Attribute, cue.Key.Value)));
        }
        foreach (var p in places.Where(p => p.Attribute >= 0 && !policy.IsAllowed(p.Name)))
            targets.Add(new CueTarget(p.Attribute, 1, Pushed(p.Attribute, 1)));
        return targets;
    }
}
