using AuditSvc.Core.ImageSets;

namespace AuditSvc.Core.Analysis;

/// <summary>
/// Item index lists per label, for the items a test may use: scored, and (per attribute) not missing.
/// Attributes without missing cells share one set of lists, so their ranks are computed once per unit.
/// </summary>
internal sealed class Strata
{
    private Strata(int[][] byLabel) => ByLabel = byLabel;

    public int[][] ByLabel { get; }

    public int MaxSize => ByLabel.Length == 0 ? 0 : ByLabel.Max(l => l.Length);

    public static Strata Build(ItemTable table, bool[] scored, int attribute)
    {
        var lists = Enumerable.Range(0, table.Labels.Count).Select(_ => new List<int>()).ToArray();
        foreach (var item in table.Items)
        {
            if (!scored[item.Index]) continue;
            if (attribute >= 0 && item.AttributeValues[attribute] < 0) continue;
            lists[item.Label].Add(item.Index);
        }
        return new Strata(lists.Select(l => l.ToArray()).ToArray());
    }
}
