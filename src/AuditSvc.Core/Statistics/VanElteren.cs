namespace AuditSvc.Core.Statistics;

/// <summary>
/// One stratum's share of a stratified rank test: the mid-ranks are taken within the stratum.
/// </summary>
/// <param name="N">Items in the stratum.</param>
/// <param name="M">Items in the stratum that have the value.</param>
/// <param name="RankSumWithValue">Sum of the within-stratum mid-ranks of those M items.</param>
/// <param name="TieTerm">Σ(t³ − t) over the stratum's tie groups (see <see cref="MidRanks"/>).</param>
public readonly record struct StratumRankSum(int N, int M, double RankSumWithValue, double TieTerm);

/// <summary>
/// Result of a stratified one-sided rank test (higher with the value).
/// </summary>
/// <param name="Statistic">van Elteren's T = Σ W_k/(N_k + 1).</param>
/// <param name="Z">(T − E[T])/sd(T); 0 when nothing could be tested.</param>
/// <param name="PValue">One-sided P(Z ≥ z) by the normal approximation; 1 when nothing could be tested.</param>
/// <param name="Auroc">Within-stratum AUROC, averaged over strata with weights M_k·L_k; NaN when no stratum was used.</param>
/// <param name="StrataUsed">Strata with at least the minimum on both sides.</param>
/// <param name="ItemsWithValue">Items with the value, over the strata used.</param>
/// <param name="ItemsWithout">Items without the value, over the strata used.</param>
public sealed record RankTestResult(
    double Statistic, double Z, double PValue, double Auroc, int StrataUsed, int ItemsWithValue, int ItemsWithout)
{
    /// <summary>The result when no stratum had enough items on both sides.</summary>
    public static RankTestResult Untestable { get; } = new(0, 0, 1, double.NaN, 0, 0, 0);
}

/// <summary>
/// van Elteren's stratified Wilcoxon test (P. H. van Elteren, "On the combination of independent
/// two-sample tests of Wilcoxon", Bull. Int. Statist. Inst. 37 (1960) 351–361): each stratum's
/// rank sum W_k is weighted by 1/(N_k + 1), which is locally most powerful when the shift is the
/// same in every stratum. Normal approximation, tie-corrected variance, no continuity correction.
/// The audit calls it for every (unit × attribute value), so it works on precomputed rank sums
/// and allocates nothing.
/// </summary>
public static class VanElteren
{
    /// <summary>
    /// Combines the strata. Strata with fewer than <paramref name="minPerSide"/> items with or
    /// without the value are skipped. The effect size is the within-stratum AUROC
    /// (R_k − M_k(M_k + 1)/2)/(M_k·L_k) averaged with weights M_k·L_k, i.e. the share of all
    /// within-stratum (with, without) pairs in which the item with the value scores higher, ties
    /// counting one half; large strata weigh in by their number of comparable pairs, as in the test.
    /// </summary>
    public static RankTestResult Combine(ReadOnlySpan<StratumRankSum> strata, int minPerSide = 3)
    {
        if (minPerSide < 1) throw new ArgumentOutOfRangeException(nameof(minPerSide), minPerSide, "At least one item per side is needed.");
        double t = 0, mean = 0, variance = 0, varianceUntied = 0, uSum = 0, pairSum = 0;
        int used = 0, withValue = 0, without = 0;
        foreach (ref readonly StratumRankSum s in strata)
        {
            int n = s.N, m = s.M;
            if ((uint)m > (uint)n) throw new ArgumentException($"Stratum with M = {m} and N = {n}: M must lie in 0..N.", nameof(strata));
            int l = n - m;
            if (m < minPerSide || l < minPerSide) continue;

            double np1 = n + 1.0;
            double ml = (double)m * l;
            t += s.RankSumWithValue / np1;
            mean += 0.5 * m;
            double varW = ml * np1 / 12.0 - ml * s.TieTerm / (12.0 * n * (n - 1.0));
            variance += varW / (np1 * np1);
            varianceUntied += ml / (12.0 * np1);
            uSum += s.RankSumWithValue - 0.5 * m * (m + 1.0);
            pairSum += ml;
            used++;
            withValue += m;
            without += l;
        }
        if (used == 0) return RankTestResult.Untestable;

        double auroc = uSum / pairSum;
        // All scores tied in every stratum (variance zero up to rounding): no evidence either way.
        if (!(variance > 1e-9 * varianceUntied)) return new RankTestResult(t, 0, 1, auroc, used, withValue, without);
        double z = (t - mean) / Math.Sqrt(variance);
        return new RankTestResult(t, z, Normal.UpperTail(z), auroc, used, withValue, without);
    }

    /// <summary>
    /// Sums the mid-ranks of one stratum per value code in one pass: <paramref name="rankSums"/>[c] and
    /// <paramref name="counts"/>[c] receive the items with code c. Negative codes (missing) are skipped.
    /// Buffers are added to, not cleared, and must be at least as long as the largest code + 1.
    /// </summary>
    public static void AccumulateRankSums(
        ReadOnlySpan<double> ranks, ReadOnlySpan<int> codes, Span<double> rankSums, Span<int> counts)
    {
        if (codes.Length != ranks.Length) throw new ArgumentException("One code per rank is needed.", nameof(codes));
        for (int i = 0; i < ranks.Length; i++)
        {
            int c = codes[i];
            if (c < 0) continue;
            rankSums[c] += ranks[i];
            counts[c]++;
        }
    }
}
