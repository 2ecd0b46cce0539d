using System.Numerics;
using AuditSvc.Core.Statistics;
using MathNetHypergeometric = MathNet.Numerics.Distributions.Hypergeometric;

namespace AuditSvc.Core.Tests.Statistics;

public class HypergeometricTests
{
    [Fact]
    public void FisherGreater_LadyTastingTea_IsSeventeenSeventieths()
    {
        // Fisher's lady tasting tea; Agresti (2002) p. 91: p = 17/70, and 1/70 for all four right.
        Close.To(17.0 / 70, FisherExact.Greater(3, 1, 1, 3), 1e-14);
        Close.To(1.0 / 70, FisherExact.Greater(4, 0, 0, 4), 1e-14);
    }

    [Fact]
    public void Pmf_RandomArguments_MatchesMathNet()
    {
        // Reference: MathNet.Numerics.Distributions.Hypergeometric (NuGet); fixed seed.
        var random = new Random(1935);
        for (int trial = 0; trial < 400; trial++)
        {
            int population = random.Next(1, 300);
            int successes = random.Next(0, population + 1);
            int draws = random.Next(0, population + 1);
            int lo = Math.Max(0, draws - (population - successes)), hi = Math.Min(successes, draws);
            int k = random.Next(lo, hi + 1);
            double expected = MathNetHypergeometric.PMF(population, successes, draws, k);
            Close.To(expected, Hypergeometric.Pmf(population, successes, draws, k), 1e-10, 0,
                $"N={population}, K={successes}, n={draws}, k={k}");
        }
    }

    [Fact]
    public void UpperTail_RandomTables_MatchesMathNetSum()
    {
        // Reference: the upper tail summed from MathNet's mass function, term by term; fixed seed.
        var random = new Random(42);
        for (int trial = 0; trial < 300; trial++)
        {
            int population = random.Next(2, 400);
            int successes = random.Next(0, population + 1);
            int draws = random.Next(0, population + 1);
            int lo = Math.Max(0, draws - (population - successes)), hi = Math.Min(successes, draws);
            int observed = random.Next(lo, hi + 2);
            double expected = 0;
            for (int k = Math.Max(observed, lo); k <= hi; k++) expected += MathNetHypergeometric.PMF(population, successes, draws, k);
            expected = Math.Min(1, expected);
            Close.To(expected, Hypergeometric.UpperTail(population, successes, draws, observed), 1e-9, 1e-15,
                $"N={population}, K={successes}, n={draws}, x={observed}");
        }
    }

    [Fact]
    public void UpperTail_LargePopulation_MatchesExactRational()
    {
        // A top-n make-up at audit scale: 100,000 images, 6,000 with the cue, 250 exemplars.
        // MathNet's mass function overflows here, so the reference is the exact rational
        // Σ C(K,k)·C(N−K,n−k) / C(N,n) in BigInteger arithmetic (definition), rounded once to double.
        const int population = 100_000, successes = 6_000, draws = 250;
        foreach (int observed in new[] { 5, 15, 30, 60, 120, 250 })
        {
            BigInteger numerator = BigInteger.Zero;
            for (int k = observed; k <= draws; k++) numerator += Choose(successes, k) * Choose(population - successes, draws - k);
            double expected = Ratio(numerator, Choose(population, draws));
            Close.To(expected, Hypergeometric.UpperTail(population, successes, draws, observed), 1e-12, 0, $"x={observed}");
        }
    }

    [Fact]
    public void Pmf_LargePopulation_MatchesExactRational()
    {
        const int population = 100_000, successes = 31_000, draws = 1_000;
        foreach (int k in new[] { 200, 290, 310, 330, 450 })
        {
            double expected = Ratio(Choose(successes, k) * Choose(population - successes, draws - k), Choose(population, draws));
            Close.To(expected, Hypergeometric.Pmf(population, successes, draws, k), 1e-12, 0, $"k={k}");
        }
    }

    private static BigInteger Choose(int n, int k)
    {
        BigInteger c = BigInteger.One;
        for (int i = 1; i <= k; i++) c = c * (n - k + i) / i;
        return c;
    }

    // num/den to double with one rounding, whatever their sizes.
    private static double Ratio(BigInteger num, BigInteger den)
    {
        if (num.IsZero) return 0;
        int shift = (int)(den.GetBitLength() - num.GetBitLength()) + 70;
        BigInteger q = shift >= 0 ? (num << shift) / den : num / (den << -shift);
        return Math.ScaleB((double)q, -shift);
    }

    [Fact]
    public void LowerTail_PlusUpperTail_IsOne()
    {
        for (int x = 0; x <= 10; x++)
        {
            double sum = Hypergeometric.LowerTail(50, 20, 10, x - 1) + Hypergeometric.UpperTail(50, 20, 10, x);
            Close.To(1.0, sum, 1e-13);
        }
    }
}
