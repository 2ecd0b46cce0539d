using AuditSvc.Api.Gate;
using AuditSvc.Api.Tests.Audits;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Core;

namespace AuditSvc.Api.Tests.Gate;

public sealed class GateClientTests
{
    [PgFact]
    public async Task Ask_WaitingForRunningAudit_ReturnsItsVerdict()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 2);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 4), 2);

        var answer = await new GateClient(client).AskAsync(id, TimeSpan.FromMinutes(3), TimeSpan.FromMilliseconds(100), CancellationToken.None);

        Assert.Equal("done", answer.State);
        Assert.Equal("pass", answer.Verdict!.Verdict);
    }

    [PgFact]
    public async Task Ask_QueuedAuditWithoutWaiting_ReturnsStateAndNoVerdict()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var answer = await new GateClient(client).AskAsync(id, TimeSpan.Zero, TimeSpan.FromSeconds(1), CancellationToken.None);

        Assert.Equal(("queued", null), (answer.State, answer.Verdict));
    }

    [PgFact]
    public async Task Ask_AuditOfAnotherTeam_ThrowsNamingAudit()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var owner = await svc.ClientAsync("team-a");
        using var other = await svc.ClientAsync("team-b");
        var id = await AuditEndpointsTests.SubmitAsync(owner, await Uploads.ModelAsync(owner), await Uploads.ImageSetAsync(owner, 2), 2);

        var e = await Assert.ThrowsAsync<AuditInputException>(() =>
            new GateClient(other).AskAsync(id, TimeSpan.Zero, TimeSpan.FromSeconds(1), CancellationToken.None));

        Assert.Equal("--audit", e.Subject);
    }
}
