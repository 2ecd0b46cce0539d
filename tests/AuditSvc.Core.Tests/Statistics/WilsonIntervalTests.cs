using AuditSvc.Core.Statistics;
using MathNetNormal = MathNet.Numerics.Distributions.Normal;

namespace AuditSvc.Core.Tests.Statistics;

public class WilsonIntervalTests
{
    [Fact]
    public void Compute_Newcombe81Of263_MatchesPublishedInterval()
    {
        // Newcombe (1998), Statistics in Medicine 17:857–872, Table I, 81/263, Wilson score method
        // without continuity correction: 0.2553 to 0.3662 (recalled from memory; checked again below).
        var (low, high) = WilsonInterval.Compute(81, 263);
        Close.To(0.2553, low, 0, 5e-5);
        Close.To(0.3662, high, 0, 5e-5);
    }

    [Fact]
    public void Compute_RandomCounts_MatchesDirectFormulaWithMathNetQuantile()
    {
        // Wilson (1927): the roots of (p̂ − π)² = z² π(1 − π)/n, solved directly; z from MathNet.
        var random = new Random(1927);
        for (int trial = 0; trial < 200; trial++)
        {
            int n = random.Next(1, 5000), x = random.Next(0, n + 1);
            double confidence = new[] { 0.8, 0.9, 0.95, 0.99 }[random.Next(4)];
            double z = MathNetNormal.InvCDF(0, 1, 0.5 + confidence / 2);
            double p = (double)x / n, z2 = z * z;
            // Quadratic (1 + z²/n)π² − (2p̂ + z²/n)π + p̂² = 0.
            double qa = 1 + z2 / n, qb = -(2 * p + z2 / n), qc = p * p;
            double root = Math.Sqrt(qb * qb - 4 * qa * qc);
            var (low, high) = WilsonInterval.Compute(x, n, confidence);
            Close.To((-qb - root) / (2 * qa), low, 1e-9, 1e-12, $"low {x}/{n}");
            Close.To((-qb + root) / (2 * qa), high, 1e-9, 1e-12, $"high {x}/{n}");
        }
    }

    [Fact]
    public void Compute_ZeroAndAll_TouchTheBounds()
    {
        Assert.Equal(0.0, WilsonInterval.Compute(0, 10).Low);
        Assert.Equal(1.0, WilsonInterval.Compute(10, 10).High);
    }
}
