using Xunit.Abstractions;
using AuditSvc.Core.Analysis;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;

namespace AuditSvc.Core.Tests.Gate;

/// <summary>
/// Null simulations: the model ignores the attribute (its predictions depend on the label only), so every measure
/// that can block must reject "no effect" at most at its nominal 5% plus Monte-Carlo error, for any number of classes,
/// set size and label link. Invented data, fixed seeds. The bound per cell is 0.05 + 3 standard errors of a rate at
/// 0.05 over the cell's runs; the pooled rate over all cells is held to 0.05 + 3 pooled standard errors.
/// </summary>
public class NullSimulationTests(ITestOutputHelper output)
{
    private const int Runs = 300;

    public static TheoryData<int, int, bool> Cells()
    {
        var data = new TheoryData<int, int, bool>();
        foreach (var k in new[] { 2, 3, 10, 30 })
            foreach (var n in new[] { 150, 1000, 5000 })
                foreach (var linked in new[] { false, true })
                    data.Add(k, n, linked);
        return data;
    }

    /// <summary>One null data set: labels skewed, errors pulled toward class 0, attribute linked to label 0 or not.</summary>
    private static (int[] Labels, int[] Values, int[] Predicted) NullSet(Random rng, int k, int n, bool linked)
    {
        var labels = new int[n];
        var values = new int[n];
        var predicted = new int[n];
        for (int i = 0; i < n; i++)
        {
            // A skewed label mix: class c drawn with weight 1/(c+1).
            double u = rng.NextDouble() * Enumerable.Range(1, k).Sum(c => 1.0 / c), acc = 0;
            int label = k - 1;
            for (int c = 0; c < k; c++) { acc += 1.0 / (c + 1); if (u < acc) { label = c; break; } }
            labels[i] = label;
            double pv = linked ? (label == 0 ? 0.8 : 0.15) : 0.3;
            values[i] = rng.NextDouble() < pv ? 1 : 0;
            if (rng.NextDouble() < 0.03) values[i] = -1; // missing cells
            double correct = 0.6 + 0.35 * (label % 3) / 2.0;
            predicted[i] = rng.NextDouble() < correct ? label : rng.NextDouble() < 0.5 ? 0 : rng.Next(k);
        }
        return (labels, values, predicted);
    }

    [Theory]
    [MemberData(nameof(Cells))]
    public void AccuracyGap_ModelIgnoresAttribute_RejectsAtMostNominally(int k, int n, bool linked)
    {
        var rng = new Random(1000 * k + n + (linked ? 7 : 0));
        int computed = 0, rejected = 0, blocked = 0;
        var policy = new AuditPolicy();
        for (int run = 0; run < Runs; run++)
        {
            var (l, v, p) = NullSet(rng, k, n, linked);
            var m = AccuracyGap.Compute(l, v, p, k, 2, k);
            if (m is null) continue;
            computed++;
            if (m.PValue < 0.05) rejected++;
            if (Verdicts.Triggers(m with { QValue = m.PValue }, policy.LeakageThreshold, policy)) blocked++;
            // The interval agrees with its own test.
            Assert.Equal(m.PValue < 0.05, m.Low > 0 || m.High < 0);
        }
        // With 30 classes and 150 images most (half, label) strata lack two images a side: those runs are not measured
        // (the gap leaves the family); the rate is held on the runs that were.
        Assert.True(computed >= 50, $"only {computed} of {Runs} runs had a usable stratum");
        double bound = 0.05 + 3 * Math.Sqrt(0.05 * 0.95 / computed);
        output.WriteLine($"null gap K={k} N={n} linked={linked}: measured {computed}/{Runs}, rejected {rejected}, blocked {blocked}, bound {bound:0.###}");
        Assert.True(rejected / (double)computed <= bound, $"K={k} N={n} linked={linked}: rejected {rejected}/{computed}, bound {bound:0.###}");
        Assert.True(blocked / (double)computed <= bound, $"K={k} N={n} linked={linked}: blocked {blocked}/{computed}");
    }

    [Theory]
    [InlineData(20)]
    [InlineData(60)]
    [InlineData(150)]
    public void PairedIntervention_ModelIgnoresTheRegion_RejectsAtMostNominally(int pairs)
    {
        // Each recipient has its own chance of the outcome; the two arms share it (and half the time the very outcome),
        // because the model's output does not depend on what the pasted region carries.
        var rng = new Random(pairs);
        const int runs = 2000;
        int rejected = 0, blocked = 0;
        var policy = new AuditPolicy();
        for (int run = 0; run < runs; run++)
        {
            var t = new bool[pairs];
            var c = new bool[pairs];
            for (int i = 0; i < pairs; i++)
            {
                double q = rng.NextDouble() < 0.7 ? 0.02 : 0.4;
                t[i] = rng.NextDouble() < q;
                c[i] = rng.NextDouble() < 0.5 ? t[i] : rng.NextDouble() < q;
            }
            var m = PairedMeasures.Of("transplant", t, c, "moved", "invented")!;
            if (m.PValue < 0.05) rejected++;
            if (Verdicts.Triggers(m with { QValue = m.PValue }, policy.LeakageThreshold, policy)) blocked++;
        }
        double bound = 0.05 + 3 * Math.Sqrt(0.05 * 0.95 / runs);
        output.WriteLine($"null intervention {pairs} pairs: rejected {rejected}/{runs}, blocked {blocked}, bound {bound:0.###}");
        Assert.True(rejected / (double)runs <= bound, $"{pairs} pairs: rejected {rejected}/{runs}");
        Assert.True(blocked / (double)runs <= bound, $"{pairs} pairs: blocked {blocked}/{runs}");
    }

    [Fact]
    public void PairedIntervention_ModelFollowsTheRegion_Blocks()
    {
        var rng = new Random(9);
        var t = new bool[80];
        var c = new bool[80];
        for (int i = 0; i < 80; i++) { c[i] = rng.NextDouble() < 0.05; t[i] = c[i] || rng.NextDouble() < 0.5; }
        var m = PairedMeasures.Of("transplant", t, c, "moved", "invented")!;
        Assert.True(m.Value > 0.3 && m.Low > 0.2, $"{m.Value} ({m.Low}..{m.High})");
        Assert.True(Verdicts.Triggers(m with { QValue = m.PValue }, 0.2, new AuditPolicy()));
    }

    [Fact]
    public void Adjust_ManyNullAttributes_BlockRateOfTheAuditStaysNominal()
    {
        // Six unrelated null attributes per audit, each with a gap and two interventions: the audit-level false block
        // rate (any attribute blocks) stays near the nominal level because the gate adjusts across the audit.
        var rng = new Random(77);
        const int audits = 300;
        int blockedAudits = 0;
        var policy = new AuditPolicy();
        for (int a = 0; a < audits; a++)
        {
            var perAttribute = new List<IReadOnlyList<Measure>>();
            var (l, _, p) = NullSet(rng, 3, 600, false);
            for (int attr = 0; attr < 6; attr++)
            {
                var v = l.Select(_ => rng.NextDouble() < 0.4 ? 1 : 0).ToArray();
                var list = new List<Measure>();
                if (AccuracyGap.Compute(l, v, p, 3, 2, 3) is { } gap) list.Add(gap);
                for (int j = 0; j < 2; j++)
                {
                    var t = new bool[60];
                    var c = new bool[60];
                    for (int i = 0; i < 60; i++) { t[i] = rng.NextDouble() < 0.1; c[i] = rng.NextDouble() < 0.1; }
                    list.Add(PairedMeasures.Of("transplant", t, c, "moved", "invented")!);
                }
                perAttribute.Add(list);
            }
            var adjusted = Verdicts.Adjust(perAttribute);
            if (adjusted.Any(list => list.Any(m => Verdicts.Triggers(m, policy.LeakageThreshold, policy)))) blockedAudits++;
        }
        double bound = 0.05 + 3 * Math.Sqrt(0.05 * 0.95 / audits);
        output.WriteLine($"null audits with six attributes: blocked {blockedAudits}/{audits}, bound {bound:0.###}");
        Assert.True(blockedAudits / (double)audits <= bound, $"blocked {blockedAudits}/{audits} null audits");
    }
}
