using AuditSvc.Core.Statistics;
using MathNetNormal = MathNet.Numerics.Distributions.Normal;
using MathNetSpecial = MathNet.Numerics.SpecialFunctions;

namespace AuditSvc.Core.Tests.Statistics;

public class NormalTests
{
    [Fact]
    public void UpperTail_FarIntoTheTail_MatchesMathNetToRelative1e12()
    {
        // Reference: MathNet.Numerics' erfc (NuGet), Q(z) = erfc(z/√2)/2.
        for (double z = 0; z <= 37.0; z += 0.03125)
        {
            double expected = 0.5 * MathNetSpecial.Erfc(z / Math.Sqrt(2));
            Close.To(expected, Normal.UpperTail(z), 1e-12, 0, $"Q({z})");
        }
    }

    [Fact]
    public void Cdf_AcrossTheRange_MatchesMathNet()
    {
        // Reference: MathNet.Numerics.Distributions.Normal.CDF.
        for (double z = -37; z <= 8; z += 0.0625)
        {
            Close.To(MathNetNormal.CDF(0, 1, z), Normal.Cdf(z), 1e-12, 0, $"Φ({z})");
        }
    }

    [Fact]
    public void Cdf_KnownPoint_IsTextbookValue()
    {
        // Φ(1.959963984540054) = 0.975, the two-sided 95% point (common practice).
        Close.To(0.975, Normal.Cdf(1.959963984540054), 1e-15);
        Close.To(0.5, Normal.Cdf(0), 0, 0);
    }

    [Fact]
    public void Quantile_RandomProbabilities_MatchesMathNet()
    {
        // Reference: MathNet.Numerics.Distributions.Normal.InvCDF; fixed seed.
        var random = new Random(20240601);
        for (int i = 0; i < 2000; i++)
        {
            double p = random.NextDouble();
            if (p == 0) continue;
            double expected = MathNetNormal.InvCDF(0, 1, p);
            Close.To(expected, Normal.Quantile(p), 1e-12, 1e-15, $"Φ⁻¹({p})");
        }
    }

    [Theory]
    [InlineData(1e-300)]
    [InlineData(1e-100)]
    [InlineData(1e-20)]
    [InlineData(1e-8)]
    [InlineData(0.02425)]
    [InlineData(0.975)]
    [InlineData(0.999999)]
    public void Quantile_TailsAndBreakpoints_MatchesMathNet(double p)
    {
        Close.To(MathNetNormal.InvCDF(0, 1, p), Normal.Quantile(p), 1e-12);
    }

    [Fact]
    public void Quantile_RoundTrip_ReturnsProbability()
    {
        // Φ's relative condition number at x is about 1 + x², so one rounding of x alone moves
        // Φ(x) by ~(1 + x²)·ε; the bound allows a few of those and nothing more.
        foreach (double p in new[] { 1e-250, 1e-30, 0.001, 0.3, 0.5, 0.7 })
        {
            double x = Normal.Quantile(p);
            Close.To(p, Normal.Cdf(x), 8 * 1.11e-16 * (1 + x * x), 0, $"p={p}");
        }
    }

    [Fact]
    public void Quantile_Ends_AreInfinite()
    {
        Assert.Equal(double.NegativeInfinity, Normal.Quantile(0));
        Assert.Equal(double.PositiveInfinity, Normal.Quantile(1));
        Assert.Throws<ArgumentOutOfRangeException>(() => Normal.Quantile(1.5));
    }
}
