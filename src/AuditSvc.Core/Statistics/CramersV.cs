namespace AuditSvc.Core.Statistics;

/// <summary>
/// Cramér's V for an r×c contingency table, V = √(χ²/(n·min(r − 1, c − 1))) (H. Cramér,
/// Mathematical Methods of Statistics, 1946), optionally with the bias correction of
/// W. Bergsma ("A bias-correction for Cramér's V and Tschuprow's T", J. Korean Stat. Soc. 42 (2013)
/// 323–328). Empty rows and columns are dropped first; with fewer than two non-empty rows or
/// columns V is undefined and NaN is returned.
/// </summary>
public static class CramersV
{
    /// <summary>V of a table of counts.</summary>
    public static double Compute(int[,] table, bool biasCorrected)
    {
        ArgumentNullException.ThrowIfNull(table);
        int rows = table.GetLength(0), cols = table.GetLength(1);
        var rowSum = new double[rows];
        var colSum = new double[cols];
        double n = 0;
        for (int i = 0; i < rows; i++)
        {
            for (int j = 0; j < cols; j++)
            {
                int v = table[i, j];
                if (v < 0) throw new ArgumentException($"Cell [{i}, {j}] is negative.", nameof(table));
                rowSum[i] += v;
                colSum[j] += v;
                n += v;
            }
        }
        int r = rowSum.Count(x => x > 0), c = colSum.Count(x => x > 0);
        if (r < 2 || c < 2) return double.NaN;

        double chi = 0;
        for (int i = 0; i < rows; i++)
        {
            if (rowSum[i] == 0) continue;
            for (int j = 0; j < cols; j++)
            {
                if (colSum[j] == 0) continue;
                double expected = rowSum[i] * colSum[j] / n;
                double d = table[i, j] - expected;
                chi += d * d / expected;
            }
        }
        return FromChiSquare(chi, n, r, c, biasCorrected);
    }

    /// <summary>
    /// V between two coded columns of equal length (codes 0..levels−1); pairs where either code is
    /// negative (missing) are left out.
    /// </summary>
    public static double Compute(ReadOnlySpan<int> a, int aLevels, ReadOnlySpan<int> b, int bLevels, bool biasCorrected)
    {
        if (a.Length != b.Length) throw new ArgumentException("The two columns differ in length.", nameof(b));
        if (aLevels < 1 || bLevels < 1) throw new ArgumentOutOfRangeException(nameof(aLevels), "Each column needs at least one level.");
        var table = new int[aLevels, bLevels];
        for (int i = 0; i < a.Length; i++)
        {
            int x = a[i], y = b[i];
            if (x < 0 || y < 0) continue;
            if (x >= aLevels || y >= bLevels) throw new ArgumentException($"Row {i}: code ({x}, {y}) is beyond the levels ({aLevels}, {bLevels}).");
            table[x, y]++;
        }
        return Compute(table, biasCorrected);
    }

    /// <summary>V from χ², the total n and the numbers of non-empty rows and columns.</summary>
    public static double FromChiSquare(double chiSquare, double n, int rows, int cols, bool biasCorrected)
    {
        if (rows < 2 || cols < 2 || n < 2) return double.NaN;
        double phi2 = chiSquare / n;
        if (!biasCorrected) return Math.Sqrt(phi2 / Math.Min(rows - 1, cols - 1));

        double phi2Corrected = Math.Max(0, phi2 - (rows - 1.0) * (cols - 1.0) / (n - 1));
        double rowsCorrected = rows - (rows - 1.0) * (rows - 1.0) / (n - 1);
        double colsCorrected = cols - (cols - 1.0) * (cols - 1.0) / (n - 1);
        double denominator = Math.Min(rowsCorrected - 1, colsCorrected - 1);
        return denominator > 0 ? Math.Sqrt(phi2Corrected / denominator) : double.NaN;
    }
}
