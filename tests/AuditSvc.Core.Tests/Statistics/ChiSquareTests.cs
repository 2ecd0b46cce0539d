using AuditSvc.Core.Statistics;
using MathNetSpecial = MathNet.Numerics.SpecialFunctions;

namespace AuditSvc.Core.Tests.Statistics;

public class ChiSquareTests
{
    [Fact]
    public void UpperTail1Df_KnownPoint_IsTextbookValue()
    {
        // 3.841458820694124 is the 95% point of χ²₁ (= 1.959964²), common practice.
        Close.To(0.05, ChiSquare.UpperTail1Df(3.841458820694124), 1e-12);
    }

    [Fact]
    public void UpperTail1Df_WideRange_MatchesMathNet()
    {
        // Reference: MathNet's regularized upper incomplete gamma Q(1/2, x/2).
        foreach (double x in new[] { 1e-6, 0.01, 0.5, 1, 3.84, 10, 50, 200, 700 })
        {
            Close.To(MathNetSpecial.GammaUpperRegularized(0.5, x / 2), ChiSquare.UpperTail1Df(x), 1e-11, 0, $"x={x}");
        }
    }

    [Fact]
    public void UpperTail_ManyDegreesOfFreedom_MatchesMathNet()
    {
        // Reference: MathNet.Numerics.SpecialFunctions.GammaUpperRegularized; fixed seed.
        var random = new Random(7);
        for (int i = 0; i < 500; i++)
        {
            int df = random.Next(1, 60);
            double x = random.NextDouble() * 4 * df + 1e-3;
            double expected = MathNetSpecial.GammaUpperRegularized(df / 2.0, x / 2);
            Close.To(expected, ChiSquare.UpperTail(x, df), 1e-10, 1e-15, $"df={df}, x={x}");
        }
    }

    [Fact]
    public void LogGamma_RandomArguments_MatchesMathNet()
    {
        var random = new Random(11);
        for (int i = 0; i < 500; i++)
        {
            double x = Math.Exp(random.NextDouble() * 16 - 6); // 0.0025 .. 22000
            Close.To(MathNetSpecial.GammaLn(x), SpecialFunctions.LogGamma(x), 1e-13, 1e-14, $"lnΓ({x})");
        }
    }

    [Fact]
    public void LogGamma_Factorials_AreExact()
    {
        // ln(10!) = ln 3628800 (definition).
        Close.To(Math.Log(3628800), SpecialFunctions.LogGamma(11), 1e-14);
    }

    [Fact]
    public void RegularizedGamma_PPlusQ_IsOne()
    {
        foreach (var (a, x) in new[] { (0.5, 0.2), (3.0, 2.0), (10.0, 12.0), (25.0, 5.0) })
        {
            Close.To(1.0, SpecialFunctions.RegularizedGammaP(a, x) + SpecialFunctions.RegularizedGammaQ(a, x), 1e-14);
        }
    }
}
