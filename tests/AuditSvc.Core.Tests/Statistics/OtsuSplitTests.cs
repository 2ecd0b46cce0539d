using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Tests.Statistics;

public class OtsuSplitTests
{
    [Fact]
    public void Find_TwoTightGroups_MatchesHandComputation()
    {
        // Otsu (1979), IEEE Trans. SMC 9(1):62–66, worked by hand: {1, 2, 3 | 10, 11, 12} splits at 3;
        // class means 2 and 11, w0 = w1 = 1/2, σ²_B = ¼·9² = 20.25; σ²_T = 125.5/6; η = 121.5/125.5.
        var (threshold, separability) = OtsuSplit.Find([12f, 1f, 11f, 3f, 2f, 10f]);
        Assert.Equal(3.0, threshold);
        Close.To(121.5 / 125.5, separability, 1e-14);
    }

    [Fact]
    public void Find_BimodalSample_SplitsBetweenTheModes()
    {
        var random = new Random(1979);
        var values = new List<float>();
        for (int i = 0; i < 300; i++) values.Add((float)(2.0 + 0.4 * Gaussian(random)));
        for (int i = 0; i < 200; i++) values.Add((float)(9.0 + 0.6 * Gaussian(random)));
        float[] shuffled = [.. values.OrderBy(_ => random.Next())];

        var (threshold, separability) = OtsuSplit.Find(shuffled);
        float lowerTop = values.Take(300).Max(), upperBottom = values.Skip(300).Min();
        Assert.True(lowerTop < upperBottom, "the invented sample should have a gap");
        Assert.True(threshold >= lowerTop && threshold < upperBottom, $"threshold {threshold} not in [{lowerTop}, {upperBottom})");
        Assert.True(separability > 0.9, $"η = {separability}");
        var (expectedThreshold, expectedSeparability) = BruteForce(shuffled);
        Assert.Equal(expectedThreshold, threshold);
        Close.To(expectedSeparability, separability, 1e-12);
    }

    [Fact]
    public void Find_RandomSamples_MatchesBruteForceOverAllThresholds()
    {
        var random = new Random(62);
        for (int trial = 0; trial < 300; trial++)
        {
            int n = random.Next(2, 120);
            var values = new float[n];
            int levels = random.Next(2, 40);
            bool onGrid = random.Next(2) == 0; // values on a grid of a few levels tie often
            double offset = random.Next(2) == 0 ? 0 : 1e4; // far from 0, where naive sums of squares lose digits
            for (int i = 0; i < n; i++)
                values[i] = (float)(offset + (onGrid ? 0.5 * random.Next(levels) : levels * random.NextDouble()));
            var (threshold, separability) = OtsuSplit.Find(values);
            var (expectedThreshold, expectedSeparability) = BruteForce(values);
            if (double.IsNaN(expectedThreshold))
            {
                Assert.True(double.IsNaN(threshold));
                continue;
            }
            Close.To(expectedSeparability, separability, 1e-9, 1e-12, $"trial {trial}");
            // Different thresholds are acceptable only when their between-class variances tie.
            if (threshold != expectedThreshold)
                Close.To(BetweenOverTotal(values, expectedThreshold), BetweenOverTotal(values, threshold), 1e-9, 0, $"trial {trial} tie");
        }
    }

    [Fact]
    public void Find_NaNValues_AreIgnored()
    {
        var (withNaN, etaWithNaN) = OtsuSplit.Find([float.NaN, 1f, 2f, float.NaN, 10f, 11f]);
        var (without, eta) = OtsuSplit.Find([1f, 2f, 10f, 11f]);
        Assert.Equal(without, withNaN);
        Assert.Equal(eta, etaWithNaN);
        Assert.Equal(2.0, without);
    }

    [Fact]
    public void Find_FewerThanTwoDistinctValues_GivesNaNAndZero()
    {
        foreach (float[] values in new[] { Array.Empty<float>(), [3f], [3f, 3f, 3f], [float.NaN, 5f, float.NaN] })
        {
            var (threshold, separability) = OtsuSplit.Find(values);
            Assert.True(double.IsNaN(threshold));
            Assert.Equal(0.0, separability);
        }
    }

    [Fact]
    public void Find_TwoDistinctValues_SeparateCompletely()
    {
        var (threshold, separability) = OtsuSplit.Find([4f, 7f, 4f, 7f, 7f]);
        Assert.Equal(4.0, threshold);
        Close.To(1.0, separability, 1e-14);
    }

    [Fact]
    public void Find_InfiniteValue_Throws()
    {
        Assert.Throws<ArgumentException>(() => OtsuSplit.Find([1f, float.PositiveInfinity]));
    }

    // Otsu's definition, evaluated at every candidate threshold t (classes x ≤ t and x > t) straight
    // from the class weights and means: σ²_B = w0(μ0 − μT)² + w1(μ1 − μT)².
    private static (double Threshold, double Separability) BruteForce(IReadOnlyList<float> values)
    {
        double[] xs = [.. values.Where(v => !float.IsNaN(v)).Select(v => (double)v)];
        double[] candidates = [.. xs.Distinct().Order()];
        if (candidates.Length < 2) return (double.NaN, 0);
        double bestThreshold = double.NaN, best = -1;
        foreach (double t in candidates[..^1])
        {
            double between = BetweenOverTotal(values, t);
            if (between > best)
            {
                best = between;
                bestThreshold = t;
            }
        }
        return (bestThreshold, best);
    }

    private static double BetweenOverTotal(IReadOnlyList<float> values, double t)
    {
        double[] xs = [.. values.Where(v => !float.IsNaN(v)).Select(v => (double)v)];
        double mean = xs.Average();
        double total = xs.Select(x => (x - mean) * (x - mean)).Average();
        double[] lower = [.. xs.Where(x => x <= t)], upper = [.. xs.Where(x => x > t)];
        double w0 = (double)lower.Length / xs.Length, w1 = (double)upper.Length / xs.Length;
        double between = w0 * Math.Pow(lower.Average() - mean, 2) + w1 * Math.Pow(upper.Average() - mean, 2);
        return between / total;
    }

    [Fact]
    public void Find_WithAReusedScratch_EqualsFindWithItsOwnArray()
    {
        var random = new Random(11);
        var scratch = new double[64];
        for (int trial = 0; trial < 500; trial++)
        {
            // The scratch keeps the previous trial's values: nothing of them may leak into the next split.
            var values = Enumerable.Range(0, random.Next(0, 64))
                .Select(_ => random.Next(8) == 0 ? float.NaN : (float)Math.Round(Gaussian(random) * 3, 1)).ToArray();
            Assert.Equal(OtsuSplit.Find(values), OtsuSplit.Find(values, scratch));
        }
        Assert.Throws<ArgumentException>(() => OtsuSplit.Find([1f, 2f, 3f], new double[2]));
    }

    private static double Gaussian(Random random) =>
        Math.Sqrt(-2 * Math.Log(1 - random.NextDouble())) * Math.Cos(2 * Math.PI * random.NextDouble());
}
