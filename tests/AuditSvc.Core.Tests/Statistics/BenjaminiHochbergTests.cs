using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Tests.Statistics;

public class BenjaminiHochbergTests
{
    // Benjamini & Hochberg (1995), J. R. Stat. Soc. B 57:289–300, their 15 p-values.
    private static readonly double[] P =
        [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.000];

    [Fact]
    public void Rejections_PaperExample_RejectsFour()
    {
        Assert.Equal(4, BenjaminiHochberg.Rejections(P, 0.05));  // Benjamini & Hochberg (1995)
    }

    [Fact]
    public void Adjust_PaperExample_MatchesPublishedQValues()
    {
        // Adjusted values as SciPy's false_discovery_control documents for this example (8 decimals).
        double[] expected =
            [0.0015, 0.003, 0.0095, 0.035625, 0.0603, 0.06385714, 0.06385714, 0.0645, 0.0765, 0.486, 0.58118182,
             0.714875, 0.75323077, 0.81321429, 1];
        double[] q = BenjaminiHochberg.Adjust(P);
        for (int i = 0; i < P.Length; i++) Close.To(expected[i], q[i], 0, 5e-9, $"q[{i}]");
        Assert.Equal(4, q.Count(v => v <= 0.05));
    }

    [Fact]
    public void Adjust_ShuffledInput_KeepsInputOrder()
    {
        double[] shuffled = [.. P.Reverse()];
        double[] q = BenjaminiHochberg.Adjust(shuffled);
        double[] inOrder = BenjaminiHochberg.Adjust(P);
        Assert.Equal(inOrder.Reverse(), q);
    }

    [Fact]
    public void Adjust_InvalidP_Throws()
    {
        Assert.Throws<ArgumentException>(() => BenjaminiHochberg.Adjust([0.1, double.NaN]));
        Assert.Throws<ArgumentException>(() => BenjaminiHochberg.Adjust([1.2]));
    }
}
