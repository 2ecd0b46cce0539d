using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Tests.Statistics;

public class CramersVTests
{
    private static (int[] A, int[] B) ModuloColumns()
    {
        var a = new int[150];
        var b = new int[150];
        for (int i = 0; i < 150; i++)
        {
            a[i] = i % 10;
            b[i] = i % 4;
        }
        return (a, b);
    }

    [Fact]
    public void Compute_ModuloExample_MatchesRecomputedValues()
    {
        // REFERENCES.md, "recomputed": V = 0.5798088336, bias-corrected (Bergsma 2013) 0.5305112825.
        var (a, b) = ModuloColumns();
        Close.To(0.5798088336, CramersV.Compute(a, 10, b, 4, biasCorrected: false), 0, 5e-11);
        Close.To(0.5305112825, CramersV.Compute(a, 10, b, 4, biasCorrected: true), 0, 5e-11);
    }

    [Fact]
    public void Compute_ModuloExample_MatchesIndependentComputation()
    {
        // Because the values above are only recomputed, the test derives them again here with a
        // different χ² formula, χ² = n(Σ O²/(R·C) − 1), and Bergsma's (2013) correction written out:
        // φ̃² = max(0, φ² − (r−1)(c−1)/(n−1)), r̃ = r − (r−1)²/(n−1), c̃ likewise, Ṽ = √(φ̃²/min(r̃−1, c̃−1)).
        var (a, b) = ModuloColumns();
        var table = new int[10, 4];
        for (int i = 0; i < 150; i++) table[a[i], b[i]]++;
        double n = 150, sum = 0;
        var rows = new double[10];
        var cols = new double[4];
        for (int i = 0; i < 10; i++) for (int j = 0; j < 4; j++) { rows[i] += table[i, j]; cols[j] += table[i, j]; }
        for (int i = 0; i < 10; i++) for (int j = 0; j < 4; j++) sum += table[i, j] * (double)table[i, j] / (rows[i] * cols[j]);
        double chi = n * (sum - 1);
        double v = Math.Sqrt(chi / (n * 3));
        double phi2 = Math.Max(0, chi / n - 9.0 * 3.0 / (n - 1));
        double rTilde = 10 - 81 / (n - 1), cTilde = 4 - 9 / (n - 1);
        double vTilde = Math.Sqrt(phi2 / Math.Min(rTilde - 1, cTilde - 1));

        Close.To(v, CramersV.Compute(table, biasCorrected: false), 1e-13);
        Close.To(vTilde, CramersV.Compute(table, biasCorrected: true), 1e-13);
    }

    [Fact]
    public void Compute_MissingCodes_AreIgnored()
    {
        int[] a = [0, 0, 1, 1, -1, 2];
        int[] b = [0, 0, 1, 1, 0, -1];
        // Only the first four pairs remain: a perfect 2×2 association, V = 1 (definition).
        Assert.Equal(1.0, CramersV.Compute(a, 3, b, 2, biasCorrected: false), 14);
    }

    [Fact]
    public void Compute_SingleLevel_IsNaN()
    {
        Assert.True(double.IsNaN(CramersV.Compute([0, 0, 0], 1, [0, 1, 0], 2, biasCorrected: true)));
    }
}
