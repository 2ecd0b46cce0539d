using AuditSvc.Core.Analysis;

namespace AuditSvc.Core.Tests.Analysis;

/// <summary>Invented predictions: a model that follows a binary cue toward class 2, and the edge cases of the interval.</summary>
public class AccuracyGapTests
{
    private static (int[] Labels, int[] Values, int[] Predicted) Reliant(int n, double follow, int seed)
    {
        var rng = new Random(seed);
        var labels = new int[n];
        var values = new int[n];
        var predicted = new int[n];
        for (int i = 0; i < n; i++)
        {
            labels[i] = i % 3;
            values[i] = rng.NextDouble() < 0.4 ? 1 : 0;
            predicted[i] = values[i] == 1 && rng.NextDouble() < follow ? 2 : labels[i];
        }
        return (labels, values, predicted);
    }

    [Fact]
    public void Compute_ModelThatFollowsTheCue_HasALargeGapClearOfZero()
    {
        var (l, v, p) = Reliant(900, 0.9, 1);
        var m = AccuracyGap.Compute(l, v, p, 3, 2, 3)!;
        // Labels 0 and 1 lose 90% of their cue images to class 2; label 2 is right either way. MH-weighted about 0.6.
        Assert.InRange(m.Value, 0.5, 0.7);
        Assert.True(m.Low > 0.4 && m.High <= 1);
        Assert.True(m.PValue < 1e-10);
        Assert.Contains("cross-fitted", m.Detail);
    }

    [Fact]
    public void Compute_GroupsAtZeroAndOneAccuracy_IntervalDoesNotCollapse()
    {
        // 119 aligned right against 11 conflicting wrong, one label: a Wald interval would say "1 to 1".
        int n = 130;
        var labels = new int[n];
        var values = new int[n];
        var predicted = new int[n];
        for (int i = 0; i < n; i++)
        {
            labels[i] = 0;
            values[i] = i < 119 ? 0 : 1;
            predicted[i] = i < 119 ? 0 : 1;
        }
        var m = AccuracyGap.Compute(labels, values, predicted, 2, 2, 2)!;
        Assert.Equal(1.0, m.Value, 9);
        Assert.True(m.Low < 0.95, $"low {m.Low}");
        Assert.True(m.High <= 1.0);
    }

    [Fact]
    public void Compute_NoLabelWithImagesOnBothSides_IsNotMeasured()
    {
        int[] labels = [0, 0, 0, 1, 1, 1];
        int[] values = [1, 1, 1, 0, 0, 0];
        int[] predicted = [0, 0, 0, 1, 1, 1];
        Assert.Null(AccuracyGap.Compute(labels, values, predicted, 2, 2, 2));
    }

    [Fact]
    public void Half_SplitsItemsEvenly()
    {
        int ones = Enumerable.Range(0, 10_000).Count(i => AccuracyGap.Half(i) == 1);
        Assert.InRange(ones, 4_850, 5_150);
    }
}
