using AuditSvc.Core.Activations;
using AuditSvc.Core.Gate;
using AuditSvc.Core.ImageSets;
using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Analysis;

/// <summary>One (unit, attribute value) test of the scan.</summary>
public readonly record struct AssociationTest(int Unit, int Attribute, int Value, double PValue, double Z, double Auroc, int StrataUsed);

/// <summary>Every test of the audit with its Benjamini–Hochberg q-value.</summary>
public sealed record ScanResult(AssociationTest[] Tests, double[] QValues);

/// <summary>
/// For every unit and attribute value: do images with the value score higher on the unit than images without,
/// the label held fixed? van Elteren's stratified Wilcoxon test (labels as strata), one-sided, with the
/// per-label AUROC as effect size; Benjamini–Hochberg across every test. Ranking all images within each label
/// (not only the top-n) is what separates a unit that sees the cue from one that sees the class when the two are
/// strongly linked (DESIGN.md, Statistics).
/// </summary>
public static class AssociationScan
{
    private const int UnitBlock = 32;

    public static ScanResult Run(ItemTable table, ActivationResult act, AuditPolicy policy, CancellationToken ct)
    {
        int n = table.Items.Count, units = act.UnitCount, attrs = table.Attributes.Count;
        // Strata sets: index 0 = all scored items; attributes with missing cells get their own.
        var strataSets = new List<Strata> { Strata.Build(table, act.Scored, -1) };
        var strataOf = new int[attrs];
        for (int a = 0; a < attrs; a++)
        {
            bool hasMissing = table.Items.Any(i => act.Scored[i.Index] && i.AttributeValues[a] < 0);
            strataOf[a] = hasMissing ? strataSets.Count : 0;
            if (hasMissing) strataSets.Add(Strata.Build(table, act.Scored, a));
        }
        var valueOffset = new int[attrs + 1];
        for (int a = 0; a < attrs; a++) valueOffset[a + 1] = valueOffset[a] + table.Attributes[a].Values.Count;
        int perUnit = valueOffset[attrs];
        var values = new int[attrs][];
        for (int a = 0; a < attrs; a++) values[a] = table.Items.Select(i => i.AttributeValues[a]).ToArray();

        var tests = new AssociationTest[(long)units * perUnit];
        var buffer = new float[UnitBlock * n];
        int maxStratum = strataSets.Max(s => s.MaxSize);
        int labels = table.Labels.Count;
        int maxValues = table.Attributes.Select(c => c.Values.Count).DefaultIfEmpty(1).Max();
        // One scratch per worker for the whole scan, not one per worker per block: each holds a rank per image.
        var scratches = new System.Collections.Concurrent.ConcurrentBag<Scratch>();
        for (int first = 0; first < units; first += UnitBlock)
        {
            ct.ThrowIfCancellationRequested();
            int count = Math.Min(UnitBlock, units - first);
            act.Scores.ReadUnits(first, count, buffer.AsSpan(0, count * n));
            Parallel.For(0, count, new ParallelOptions { CancellationToken = ct },
                () => scratches.TryTake(out var kept) ? kept : new Scratch(n, maxStratum, labels, maxValues),
                (k, _, s) =>
                {
                    var scores = buffer.AsSpan(k * n, n);
                    ScanUnit(first + k, scores, strataSets, strataOf, values, valueOffset, table, policy, tests.AsSpan((first + k) * perUnit, perUnit), s);
                    return s;
                },
                scratches.Add);
        }
        var p = tests.Select(t => t.PValue).ToArray();
        return new ScanResult(tests, BenjaminiHochberg.Adjust(p));
    }

    private static void ScanUnit(
        int unit, ReadOnlySpan<float> scores, List<Strata> strataSets, int[] strataOf, int[][] values,
        int[] valueOffset, ItemTable table, AuditPolicy policy, Span<AssociationTest> output, Scratch s)
    {
        int labels = table.Labels.Count;
        for (int set = 0; set < strataSets.Count; set++)
        {
            bool used = false;
            for (int a = 0; a < strataOf.Length && !used; a++) used = strataOf[a] == set;
            if (!used) continue;
            var strata = strataSets[set];
            for (int k = 0; k < labels; k++)
            {
                var list = strata.ByLabel[k];
                var v = s.Values.AsSpan(0, list.Length);
                for (int i = 0; i < list.Length; i++) v[i] = scores[list[i]];
                var r = s.Ranks.AsSpan(0, list.Length);
                s.TieTerm[k] = MidRanks.Compute(v, r, s.Order.AsSpan(0, list.Length));
                for (int i = 0; i < list.Length; i++) s.RankOf[list[i]] = r[i];
            }
            for (int a = 0; a < strataOf.Length; a++)
            {
                if (strataOf[a] != set) continue;
                int valueCount = table.Attributes[a].Values.Count;
                var attrValues = values[a];
                for (int k = 0; k < labels; k++)
                {
                    var list = strata.ByLabel[k];
                    var sums = s.Sums.AsSpan(k * s.MaxValues, valueCount);
                    var counts = s.Counts.AsSpan(k * s.MaxValues, valueCount);
                    sums.Clear();
                    counts.Clear();
                    foreach (int item in list)
                    {
                        int val = attrValues[item];
                        if (val < 0) continue;
                        sums[val] += s.RankOf[item];
                        counts[val]++;
                    }
                }
                for (int val = 0; val < valueCount; val++)
                {
                    var st = s.Strata.AsSpan(0, labels);
                    for (int k = 0; k < labels; k++)
                        st[k] = new StratumRankSum(strata.ByLabel[k].Length, s.Counts[k * s.MaxValues + val], s.Sums[k * s.MaxValues + val], s.TieTerm[k]);
                    var res = VanElteren.Combine(st, policy.MinPerSide);
                    output[valueOffset[a] + val] = new AssociationTest(unit, a, val, res.PValue, res.Z, res.Auroc, res.StrataUsed);
                }
            }
        }
    }

    private sealed class Scratch(int items, int maxStratum, int labels, int maxValues)
    {
        public readonly float[] Values = new float[maxStratum];
        public readonly double[] Ranks = new double[maxStratum];
        public readonly int[] Order = new int[maxStratum];
        public readonly double[] RankOf = new double[items];
        public readonly double[] TieTerm = new double[labels];
        public readonly int MaxValues = Math.Max(1, maxValues);
        public readonly double[] Sums = new double[labels * Math.Max(1, maxValues)];
        public readonly int[] Counts = new int[labels * Math.Max(1, maxValues)];
        public readonly StratumRankSum[] Strata = new StratumRankSum[labels];
    }
}
