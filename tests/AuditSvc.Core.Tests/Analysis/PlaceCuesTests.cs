using AuditSvc.Core.Activations;
using AuditSvc.Core.Analysis;

namespace AuditSvc.Core.Tests.Analysis;

public class PlaceCuesTests
{
    private static Peak[] Top(float ninth, int count = 9) =>
        Enumerable.Range(0, count).Select(i => new Peak(i, i == Math.Min(count, 9) - 1 ? ninth : ninth + 9 - i, 0, 0)).ToArray();

    [Fact]
    public void Live_CountingForm_AgreesWithSortedMedianOnTiesZerosAndNonFinite()
    {
        var rng = new Random(5);
        float[] specials = [0f, float.NaN, float.PositiveInfinity, float.NegativeInfinity];
        for (int trial = 0; trial < 4000; trial++)
        {
            int n = rng.Next(0, 40);
            // Few distinct values, so ties with the median and with the ninth score are common; ReLU-like zeros too.
            var scores = Enumerable.Range(0, n)
                .Select(_ => rng.Next(10) == 0 ? specials[rng.Next(specials.Length)] : rng.Next(6) * 0.5f).ToArray();
            float ninth = rng.Next(12) switch { 0 => float.NaN, 1 => float.PositiveInfinity, _ => rng.Next(7) * 0.5f };
            var top = Top(ninth, rng.Next(0, 12));
            Assert.True(PlaceCues.LiveReference(top, scores) == PlaceCues.Live(top, scores),
                $"trial {trial}: ninth {ninth}, top {top.Length}, scores [{string.Join(", ", scores)}]");
        }
    }

    [Fact]
    public void Live_NinthAboveTheMedian_IsLive_FlatUnitIsNot()
    {
        Assert.True(PlaceCues.Live(Top(3f), new float[] { 0, 0, 1, 2, 3, 4 }));
        Assert.False(PlaceCues.Live(Top(1f), new float[] { 1, 1, 1, 1, 1 }));
        Assert.False(PlaceCues.Live(Top(1f), new float[] { float.NaN, float.NaN }));
    }
}
