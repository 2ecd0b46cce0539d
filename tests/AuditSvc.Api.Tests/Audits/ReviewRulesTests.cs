using AuditSvc.Api.Audits;

namespace AuditSvc.Api.Tests.Audits;

public sealed class ReviewRulesTests
{
    [Theory]
    [InlineData(0, null, "spurious", null, "", null)]
    [InlineData(null, "stamp=yes", "needs-data", null, "", null)]
    [InlineData(null, "stamp=yes", "acceptable", null, "the grade mark", null)]
    [InlineData(null, null, "override", "pass", "checked by hand", null)]
    [InlineData(null, "stamp=yes", "acceptable", null, "  ", "422 reason")]
    [InlineData(null, null, "override", "pass", "", "422 reason")]
    [InlineData(null, null, "override", null, "why", "422 verdict")]
    [InlineData(null, null, "override", "maybe", "why", "400 verdict")]
    [InlineData(0, null, "override", "pass", "why", "400 finding")]
    [InlineData(null, "stamp=yes", "override", "pass", "why", "400 cue")]
    [InlineData(0, null, "spurious", "block", "", "400 verdict")]
    [InlineData(0, "stamp=yes", "spurious", null, "", "400 cue")]
    [InlineData(null, null, "needs-data", null, "", "400 cue")]
    [InlineData(null, "stamp", "spurious", null, "", "400 cue")]
    [InlineData(-1, null, "spurious", null, "", "400 finding")]
    [InlineData(0, null, "confirmed", null, "", "400 decision")]
    [InlineData(0, null, null, null, "", "400 decision")]
    public void Check_Request_AcceptsOrNamesTheField(int? finding, string? cue, string? decision, string? verdict, string reason, string? expected)
    {
        var problem = ReviewRules.Check(finding, cue, decision, verdict, reason);

        Assert.Equal(expected, problem is null ? null : $"{problem.Status} {problem.Field}");
    }

    [Fact]
    public void Check_ReasonTooLong_Returns400NamingReason() =>
        Assert.Equal("reason", ReviewRules.Check(0, null, "spurious", null, new string('x', ReviewRules.MaxReason + 1))!.Field);
}
