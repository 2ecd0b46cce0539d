using System.Globalization;
using AuditSvc.Core.ImageSets;

namespace AuditSvc.Compute.ImageSets;

/// <summary>
/// Turns attribute cells into codes. Empty cells are missing (-1), not a value. A column whose cells all parse
/// as numbers and that has more distinct values than <see cref="MaxCategoricalNumbers"/> is binned into
/// quartiles (equal-count bins are the common practice that works for any scale).
/// </summary>
public static class AttributeBinning
{
    public const int MaxCategoricalNumbers = 8;
    public const int Bins = 4;

    /// <summary>
    /// A categorical column with more values than this (an id, a file date) is not tested: each value would be
    /// a handful of images and a multiple-testing burden. Intake reports it so the user can group it.
    /// </summary>
    public const int MaxCategoricalValues = 50;

    public static List<AttributeColumn> Build(string[] names, List<string?[]> cells, out int[][] codes) => Build(names, cells, out codes, out _);

    /// <param name="skipped">Columns left out, with the reason.</param>
    public static List<AttributeColumn> Build(string[] names, List<string?[]> cells, out int[][] codes, out List<(string Column, string Reason)> skipped)
    {
        skipped = [];
        var keep = new List<int>();
        for (int c = 0; c < names.Length; c++)
        {
            int distinct = cells.Select(r => c < r.Length ? r[c]?.Trim() : null).Where(v => !string.IsNullOrEmpty(v)).Distinct(StringComparer.Ordinal).Count();
            bool numeric = cells.All(r => c >= r.Length || string.IsNullOrWhiteSpace(r[c]) || double.TryParse(r[c], NumberStyles.Float, CultureInfo.InvariantCulture, out var d) && double.IsFinite(d));
            if (!numeric && distinct > MaxCategoricalValues)
                skipped.Add((names[c], $"attribute column '{names[c]}' has {distinct} distinct values (more than {MaxCategoricalValues}): not tested; group it into fewer values"));
            else if (distinct == 0)
                skipped.Add((names[c], $"attribute column '{names[c]}' is empty: not tested"));
            else keep.Add(c);
        }
        names = keep.Select(c => names[c]).ToArray();
        cells = cells.Select(r => keep.Select(c => c < r.Length ? r[c] : null).ToArray()).ToList();
        codes = cells.Select(_ => new int[names.Length]).ToArray();
        var columns = new List<AttributeColumn>();
        for (int c = 0; c < names.Length; c++)
        {
            var raw = cells.Select(r => c < r.Length && !string.IsNullOrWhiteSpace(r[c]) ? r[c]!.Trim() : null).ToArray();
            var present = raw.Where(s => s is not null).Select(s => s!).ToArray();
            var distinct = present.Distinct(StringComparer.Ordinal).ToArray();
            var numbers = present.Select(s => double.TryParse(s, NumberStyles.Float, CultureInfo.InvariantCulture, out var d) ? d : double.NaN).ToArray();
            bool numeric = present.Length > 0 && numbers.All(double.IsFinite) && distinct.Length > MaxCategoricalNumbers;
            if (numeric)
            {
                var edges = QuantileEdges(numbers);
                var labels = Enumerable.Range(0, edges.Length - 1).Select(b => BinLabel(edges, b)).ToList();
                for (int i = 0; i < raw.Length; i++)
                    codes[i][c] = raw[i] is null ? -1 : BinOf(edges, double.Parse(raw[i]!, NumberStyles.Float, CultureInfo.InvariantCulture));
                columns.Add(new AttributeColumn(names[c], labels, true));
            }
            else
            {
                var values = distinct.Order(StringComparer.Ordinal).ToList();
                var index = values.Select((v, i) => (v, i)).ToDictionary(t => t.v, t => t.i, StringComparer.Ordinal);
                for (int i = 0; i < raw.Length; i++) codes[i][c] = raw[i] is null ? -1 : index[raw[i]!];
                columns.Add(new AttributeColumn(names[c], values, false));
            }
        }
        return columns;
    }

    /// <summary>Bin edges at the quartiles; repeated edges (heavy ties) are merged so no bin is empty by construction.</summary>
    public static double[] QuantileEdges(double[] values)
    {
        var sorted = values.Order().ToArray();
        var edges = new List<double> { sorted[0] };
        for (int b = 1; b < Bins; b++)
        {
            double e = sorted[(int)Math.Floor(b * (sorted.Length - 1) / (double)Bins)];
            if (e > edges[^1]) edges.Add(e);
        }
        if (sorted[^1] > edges[^1] || edges.Count == 1) edges.Add(sorted[^1]);
        return edges.ToArray();
    }

    public static int BinOf(double[] edges, double v)
    {
        for (int b = 1; b < edges.Length - 1; b++) if (v < edges[b]) return b - 1;
        return edges.Length - 2;
    }

    private static string BinLabel(double[] edges, int b) =>
        b == edges.Length - 2 ? FormattableString.Invariant($"[{edges[b]:G4}, {edges[b + 1]:G4}]") : FormattableString.Invariant($"[{edges[b]:G4}, {edges[b + 1]:G4})");
}
