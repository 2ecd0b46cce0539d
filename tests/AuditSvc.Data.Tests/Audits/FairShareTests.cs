using AuditSvc.Data.Audits;

namespace AuditSvc.Data.Tests.Audits;

public sealed class FairShareTests
{
    private static readonly Guid TeamA = new("aaaaaaaa-0000-0000-0000-000000000000"), TeamB = new("bbbbbbbb-0000-0000-0000-000000000000");
    private static readonly DateTime T0 = new(2026, 1, 1, 0, 0, 0, DateTimeKind.Utc);

    [Fact]
    public void Plan_TeamWithFiveAudits_GetsOneWindowNotFive()
    {
        var a = Enumerable.Range(0, 5).Select(i => new OpenAudit(TeamA, Id(i), T0.AddMinutes(i), 0, 10)).ToList();
        var b = new OpenAudit(TeamB, Id(9), T0.AddMinutes(9), 0, 10);

        var plan = FairShare.Plan([.. a, b], window: 3);

        Assert.Equal(3, plan.Count(id => id != b.AuditId));
        Assert.Equal(3, plan.Count(id => id == b.AuditId));
        Assert.Equal(3, plan.Where(id => id != b.AuditId).Distinct().Count()); // its share spread over its audits, oldest first
        Assert.Equal([Id(0), Id(1), Id(2)], plan.Where(id => id != b.AuditId).Order());
    }

    [Fact]
    public void Plan_TwoTeams_AlternateTheFewestInFlightFirst()
    {
        var big = new OpenAudit(TeamA, Id(1), T0, 1, 50);
        var small = new OpenAudit(TeamB, Id(2), T0.AddMinutes(1), 0, 2);

        var plan = FairShare.Plan([big, small], window: 3);

        Assert.Equal([small.AuditId, big.AuditId, small.AuditId, big.AuditId], plan);
    }

    [Fact]
    public void Plan_WindowFullOrNothingWaiting_DispatchesNothing()
    {
        Assert.Empty(FairShare.Plan([new OpenAudit(TeamA, Id(1), T0, 2, 8), new OpenAudit(TeamB, Id(2), T0, 1, 0)], window: 2));
        Assert.Throws<ArgumentOutOfRangeException>(() => FairShare.Plan([], window: 0));
    }

    private static Guid Id(int i) => new($"00000000-0000-0000-0000-{i:D12}");
}
