namespace AuditSvc.Core.Tests.Statistics;

internal static class Close
{
    // |actual − expected| ≤ relative·|expected| + absolute, with a message that shows both.
    public static void To(double expected, double actual, double relative, double absolute = 0, string? what = null)
    {
        double allowed = relative * Math.Abs(expected) + absolute;
        Assert.True(Math.Abs(actual - expected) <= allowed,
            $"{what ?? "value"}: expected {expected:R}, got {actual:R} (allowed ±{allowed:G3})");
    }
}
