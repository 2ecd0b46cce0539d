using System.Diagnostics;
using System.Net;
using System.Net.Http.Json;
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

    [PgFact]
    public async Task Ask_OverriddenAudit_ReturnsTheOverrideBesideTheEngineVerdict()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        var (client, key) = await ReviewEndpointsTests.SignedClientAsync(svc, "team-a", "rita");
        using var _ = client;
        var id = await ReviewEndpointsTests.DoneAuditAsync(svc, client);
        var posted = await client.PostAsJsonAsync($"/api/audits/{id}/reviews",
            new { decision = "override", verdict = "block", reason = "stamp\u001b[2J seen by hand" });
        Assert.Equal(HttpStatusCode.Created, posted.StatusCode);

        var answer = await new GateClient(client).AskAsync(id, TimeSpan.Zero, TimeSpan.FromSeconds(1), CancellationToken.None);
        var lines = GateReport.Lines(answer.Verdict!);

        Assert.Equal(("block", "pass", "block"), (answer.Verdict!.Verdict, answer.Verdict.EngineVerdict, answer.Verdict.Override!.Verdict));
        Assert.Equal("verdict: block (overridden; engine verdict: pass)", lines[0]);
        Assert.StartsWith($"  override by rita ({key.Prefix}) at ", lines[1], StringComparison.Ordinal);
        Assert.EndsWith(": stamp [2J seen by hand", lines[1], StringComparison.Ordinal); // no escape reaches the terminal
        Assert.Contains("  stamp: leakage 0.05 (pass)", lines);
    }

    [PgFact]
    public async Task GateCommand_OverriddenToBlock_PrintsBothVerdictsAndExitsAsBlock()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        var (apiKey, _) = await Ui.BrowserSession.KeyAsync(svc, "team-a", "release");
        var (client, _) = await ReviewEndpointsTests.SignedClientAsync(svc, "team-a", "rita");
        using var __ = client;
        var id = await ReviewEndpointsTests.DoneAuditAsync(svc, client);
        var (passStatus, passOut, _) = await GateAsync(svc, id, apiKey);
        var posted = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { decision = "override", verdict = "block", reason = "stamp seen by hand" });
        Assert.Equal(HttpStatusCode.Created, posted.StatusCode);

        var (status, stdout, stderr) = await GateAsync(svc, id, apiKey);

        Assert.Equal((0, "verdict: pass"), (passStatus, passOut.Split('\n')[0].TrimEnd()));
        Assert.True(status == 1, stderr); // exit 1: block (auditsvc gate's contract)
        Assert.Contains("verdict: block (overridden; engine verdict: pass)", stdout, StringComparison.Ordinal);
        Assert.Contains("stamp seen by hand", stdout, StringComparison.Ordinal);
    }

    // The built command line (auditsvc.dll is copied beside these tests) as a pipeline step runs it.
    private static async Task<(int Status, string Out, string Err)> GateAsync(ServiceUnderTest svc, Guid id, string key)
    {
        var psi = new ProcessStartInfo("dotnet") { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        foreach (var a in new[] { Path.Combine(AppContext.BaseDirectory, "auditsvc.dll"), "gate", "--server", svc.Address.ToString(), "--audit", id.ToString() })
            psi.ArgumentList.Add(a);
        psi.Environment["AUDITSVC_KEY"] = key;
        using var p = Process.Start(psi)!;
        var stdout = p.StandardOutput.ReadToEndAsync();
        var stderr = p.StandardError.ReadToEndAsync();
        using var guard = new CancellationTokenSource(TimeSpan.FromMinutes(3)); // against a hung child, not a timing assertion
        await p.WaitForExitAsync(guard.Token);
        return (p.ExitCode, await stdout, await stderr);
    }
}
