using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Analysis;

/// <summary>How strongly an attribute is tied to the label over the image set.</summary>
public sealed record AttributeLink(int Attribute, double CramersV, bool Confounded);

/// <summary>
/// Cramér's V (bias-corrected, Bergsma 2013) between each attribute and the label. An attribute is confounded
/// when V reaches the policy's level or when no value has a label with enough images on both sides for the stratified test: then the
/// audit cannot tell the cue from the class, and says so instead of guessing.
/// </summary>
public static class AttributeAssociation
{
    public static AttributeLink[] Compute(ItemTable table, bool[] scored, AuditPolicy policy)
    {
        int labels = table.Labels.Count;
        var result = new AttributeLink[table.Attributes.Count];
        for (int a = 0; a < result.Length; a++)
        {
            int vc = table.Attributes[a].Values.Count;
            var counts = new int[labels, vc];
            var labelCodes = new List<int>();
            var valueCodes = new List<int>();
            foreach (var item in table.Items)
            {
                int v = item.AttributeValues[a];
                if (!scored[item.Index] || v < 0) continue;
                counts[item.Label, v]++;
                labelCodes.Add(item.Label);
                valueCodes.Add(v);
            }
            double cv = vc < 2 || labels < 2 ? 0 : CramersV.Compute(labelCodes.ToArray(), labels, valueCodes.ToArray(), vc, biasCorrected: true);
            if (double.IsNaN(cv)) cv = 0;
            var perLabel = new int[labels];
            for (int k = 0; k < labels; k++)
                for (int v = 0; v < vc; v++) perLabel[k] += counts[k, v];
            bool separable = false;
            for (int v = 0; v < vc && !separable; v++)
                for (int k = 0; k < labels && !separable; k++)
                    separable = counts[k, v] >= policy.MinPerSide && perLabel[k] - counts[k, v] >= policy.MinPerSide;
            result[a] = new AttributeLink(a, cv, cv >= policy.ConfoundedV || !separable);
        }
        return result;
    }
}
