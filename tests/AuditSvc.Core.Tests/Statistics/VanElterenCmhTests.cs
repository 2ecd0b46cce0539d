using AuditSvc.Core.Statistics;
using MathNetChiSquared = MathNet.Numerics.Distributions.ChiSquared;

namespace AuditSvc.Core.Tests.Statistics;

/// <summary>
/// Holds the engine's van Elteren test against a second, independently written statistic: the
/// Cochran–Mantel–Haenszel "row mean scores differ" statistic with modified ridit scores.
/// Source of the equivalence: SAS/STAT documentation, PROC FREQ, "Cochran-Mantel-Haenszel
/// Statistics" and the SCORES=MODRIDIT option, which states that the row mean scores statistic
/// with modified ridit scores for a 2-row table is van Elteren's stratified Wilcoxon test.
/// Only that statement is taken from SAS; every number below is recomputed here, none is copied.
/// The statistic follows its textbook definition (Landis, Heyman &amp; Koch, Int. Statist. Rev. 46
/// (1978) 237–254; Agresti, Categorical Data Analysis, generalized CMH statistics), built from the
/// 2 × C table of each stratum, not from the engine's mid-ranks.
/// </summary>
public class VanElterenCmhTests
{
    // One stratum as raw data: a score per item and whether the item has the value.
    private sealed record Stratum(float[] Values, bool[] HasValue);

    // Q and its signed numerator Σ_h (f_h − E f_h) on the "with the value" row (its sign is Z's).
    private readonly record struct Cmh(double Q, double Numerator);

    [Fact]
    public void Combine_HandBuiltThreeStrataWithTies_ZSquaredEqualsCmhRowMeanScores()
    {
        // Columns are score levels 1 < 2 < 3 < 4; rows are items without / with the value.
        //   stratum 1 (n=8):  without 2 1 1   with 1 1 2     column totals 3 2 3
        //   stratum 2 (n=7):  without 3 1     with 1 2       column totals 4 3
        //   stratum 3 (n=10): without 2 2 1 0 with 0 1 2 2   column totals 2 3 3 2
        // Modified ridits a_j = (before_j + (n_+j + 1)/2)/(n + 1); their margin-weighted mean is 1/2:
        //   stratum 1: 2/9, 1/2, 7/9          f = 41/18, E f = 2,   Var f = 25/189
        //   stratum 2: 5/16, 3/4              f = 29/16, E f = 3/2, Var f = 3/32
        //   stratum 3: 3/22, 4/11, 7/11, 19/22 f = 37/11, E f = 5/2, Var f = 775/4356
        // Σ(f − E f) = 2303/1584, Σ Var f = 295607/731808,
        // Q = 37126663/7094568 ≈ 5.2331111633577, two-sided χ²₁ p ≈ 0.022160859.
        // (Worked by hand from the definition above and checked in exact rational arithmetic.)
        Stratum[] strata =
        [
            FromTable([2, 1, 1], [1, 1, 2]),
            FromTable([3, 1], [1, 2]),
            FromTable([2, 2, 1, 0], [0, 1, 2, 2]),
        ];

        var cmh = RowMeanScores(strata);
        Close.To(37126663.0 / 7094568, cmh.Q, 1e-13, 0, "Q against the hand value");
        Close.To(2303.0 / 1584, cmh.Numerator, 1e-13, 0, "Σ(f − E f) against the hand value");

        var r = VanElteren.Combine(EngineStrata(strata), minPerSide: 3);
        Assert.Equal(3, r.StrataUsed);
        Close.To(cmh.Q, r.Z * r.Z, 1e-9, 0, "Z² against Q");
        Assert.True(r.Z > 0, "the with-the-value row scores higher, so Z must be positive");
        Close.To(ChiSquareTwoSidedP(cmh.Q), TwoSided(r.PValue), 1e-9, 1e-14, "two-sided p");
        Close.To(0.022160859, TwoSided(r.PValue), 1e-7, 0, "two-sided p against the hand value");
    }

    [Fact]
    public void Combine_RandomStrataWithTies_ZSquaredEqualsCmhRowMeanScores()
    {
        var random = new Random(1978);
        for (int trial = 0; trial < 400; trial++)
        {
            Stratum[] strata = RandomStrata(random);
            var cmh = RowMeanScores(strata);
            var r = VanElteren.Combine(EngineStrata(strata), minPerSide: 3);

            Assert.Equal(strata.Length, r.StrataUsed);   // every stratum has ≥ 3 on both sides
            Close.To(cmh.Q, r.Z * r.Z, 1e-9, 0, $"trial {trial}: Z² against Q");
            Assert.True(Math.Sign(cmh.Numerator) == Math.Sign(r.Z) || cmh.Q < 1e-20,
                $"trial {trial}: sign of Z {r.Z} against Σ(f − E f) {cmh.Numerator}");
        }
    }

    [Fact]
    public void Combine_RandomStrataWithTies_TwoSidedPEqualsCmhChiSquareP()
    {
        var random = new Random(1960);
        for (int trial = 0; trial < 400; trial++)
        {
            Stratum[] strata = RandomStrata(random);
            var cmh = RowMeanScores(strata);
            var r = VanElteren.Combine(EngineStrata(strata), minPerSide: 3);

            // RankTestResult.PValue is one-sided, P(Z ≥ z); Q is a χ²₁ statistic, so it is compared
            // with 2·min(p, 1 − p). The absolute 1e-14 allows for 1 − CDF losing digits to rounding.
            Close.To(ChiSquareTwoSidedP(cmh.Q), TwoSided(r.PValue), 1e-9, 1e-14, $"trial {trial}: two-sided p");
        }
    }

    // Random multi-stratum data: 2–6 strata of 6–40 items, 3 or more on each side, few score levels
    // (many ties), and a random shift for the items with the value so that large |Z| occur too.
    private static Stratum[] RandomStrata(Random random)
    {
        var strata = new Stratum[random.Next(2, 7)];
        int levels = random.Next(2, 9);
        int shift = random.Next(0, 3);
        for (int k = 0; k < strata.Length; k++)
        {
            int n = random.Next(6, 41);
            int m = random.Next(3, n - 2);
            var has = new bool[n];
            for (int i = 0; i < m; i++) has[i] = true;
            random.Shuffle(has);
            var values = new float[n];
            do
            {
                for (int i = 0; i < n; i++) values[i] = random.Next(levels) + (has[i] ? shift : 0);
            }
            while (values.Distinct().Count() < 2);   // an all-tied stratum carries no variance
            strata[k] = new Stratum(values, has);
        }
        return strata;
    }

    // Expands a 2 × C table of counts into raw items with scores 1..C.
    private static Stratum FromTable(int[] without, int[] with)
    {
        var values = new List<float>();
        var has = new List<bool>();
        for (int j = 0; j < without.Length; j++)
        {
            for (int i = 0; i < without[j]; i++) { values.Add(j + 1); has.Add(false); }
            for (int i = 0; i < with[j]; i++) { values.Add(j + 1); has.Add(true); }
        }
        return new Stratum([.. values], [.. has]);
    }

    // The engine's path, as the audit uses it: within-stratum mid-ranks, rank sums per code.
    private static StratumRankSum[] EngineStrata(Stratum[] strata)
    {
        var result = new StratumRankSum[strata.Length];
        for (int k = 0; k < strata.Length; k++)
        {
            var s = strata[k];
            int n = s.Values.Length;
            var ranks = new double[n];
            double tie = MidRanks.Compute(s.Values, ranks);
            var codes = s.HasValue.Select(h => h ? 1 : 0).ToArray();
            var sums = new double[2];
            var counts = new int[2];
            VanElteren.AccumulateRankSums(ranks, codes, sums, counts);
            result[k] = new StratumRankSum(n, counts[1], sums[1], tie);
        }
        return result;
    }

    // CMH row mean scores statistic for 2-row tables, from the definition: column scores are the
    // modified ridits of the column margins, f_h = Σ_j a_hj n_1j on the "with" row,
    // E f_h = n_1+ · ā_h, Var f_h = n_1+ n_2+ /(n_h − 1) · Σ_j n_+j (a_hj − ā_h)² / n_h,
    // Q = (Σ_h (f_h − E f_h))² / Σ_h Var f_h.
    private static Cmh RowMeanScores(Stratum[] strata)
    {
        double numerator = 0, variance = 0;
        foreach (var s in strata)
        {
            float[] levels = [.. s.Values.Distinct().Order()];
            int c = levels.Length;
            var withCount = new double[c];
            var columnTotal = new double[c];
            for (int i = 0; i < s.Values.Length; i++)
            {
                int j = Array.IndexOf(levels, s.Values[i]);
                columnTotal[j]++;
                if (s.HasValue[i]) withCount[j]++;
            }
            double n = s.Values.Length;
            double rowWith = withCount.Sum(), rowWithout = n - rowWith;

            var a = new double[c];
            double before = 0;
            for (int j = 0; j < c; j++)
            {
                a[j] = (before + (columnTotal[j] + 1) / 2) / (n + 1);
                before += columnTotal[j];
            }
            double meanA = 0;
            for (int j = 0; j < c; j++) meanA += columnTotal[j] * a[j];
            meanA /= n;

            double f = 0, spread = 0;
            for (int j = 0; j < c; j++)
            {
                f += a[j] * withCount[j];
                spread += columnTotal[j] * (a[j] - meanA) * (a[j] - meanA);
            }
            numerator += f - rowWith * meanA;
            variance += rowWith * rowWithout / (n - 1) * spread / n;
        }
        return new Cmh(numerator * numerator / variance, numerator);
    }

    // Reference: MathNet's χ² distribution with one degree of freedom.
    private static double ChiSquareTwoSidedP(double q) => 1 - MathNetChiSquared.CDF(1, q);

    private static double TwoSided(double oneSided) => 2 * Math.Min(oneSided, 1 - oneSided);
}
