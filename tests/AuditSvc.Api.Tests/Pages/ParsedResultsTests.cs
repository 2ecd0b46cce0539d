using AuditSvc.Api.Pages;
using AuditSvc.Api.Tests.Audits;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Api.Tests.Ui;
using AuditSvc.Data.Tests;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Tests.Pages;

/// <summary>
/// Finished results are parsed once for the audit page and the unit pages, kept per team and audit, and the cache
/// stays inside its budget of audit.json characters.
/// </summary>
public class ParsedResultsTests
{
    private static Func<CancellationToken, Task<string?>> Load(string? json, Action? counted = null) => _ =>
    {
        counted?.Invoke();
        return Task.FromResult(json);
    };

    [Fact]
    public async Task GetAsync_SameAuditTwice_ReadsAndParsesOnce()
    {
        using var results = new ParsedResults();
        var (team, id) = (Guid.NewGuid(), Guid.NewGuid());
        int reads = 0;

        var first = await results.GetAsync(team, id, Load("{\"verdict\":\"pass\"}", () => reads++), CancellationToken.None);
        var second = await results.GetAsync(team, id, Load("{\"verdict\":\"pass\"}", () => reads++), CancellationToken.None);

        Assert.NotNull(first);
        Assert.Same(first, second);
        Assert.Equal(1, reads);
        Assert.Equal(1, results.Parses);
    }

    [Fact]
    public async Task GetAsync_AnotherTeamsAudit_IsNeverServedFromTheCache()
    {
        using var results = new ParsedResults();
        var id = Guid.NewGuid();
        await results.GetAsync(Guid.NewGuid(), id, Load("{}"), CancellationToken.None);

        // The other team's store answers "no such finished audit" (ids of other teams answer like missing ones).
        Assert.Null(await results.GetAsync(Guid.NewGuid(), id, Load(null), CancellationToken.None));
    }

    [Fact]
    public async Task GetAsync_UnfinishedAudit_IsNotKept()
    {
        using var results = new ParsedResults();
        var (team, id) = (Guid.NewGuid(), Guid.NewGuid());
        Assert.Null(await results.GetAsync(team, id, Load(null), CancellationToken.None));
        Assert.NotNull(await results.GetAsync(team, id, Load("{}"), CancellationToken.None));
        Assert.Equal(1, results.Parses);
    }

    [Fact]
    public async Task GetAsync_ManyAudits_StaysWithinItsBudget()
    {
        const long budget = 10_000;
        using var results = new ParsedResults(budget);
        var json = "{\"verdict\":\"pass\",\"pad\":\"" + new string('x', 980) + "\"}"; // 1,000 characters
        var team = Guid.NewGuid();
        for (int i = 0; i < 200; i++)
        {
            await results.GetAsync(team, Guid.NewGuid(), Load(json), CancellationToken.None);
            Assert.InRange(results.Count, 0, (int)(budget / json.Length));
        }
        Assert.True(results.Count > 0, "the cache kept nothing");
    }

    [PgFact]
    public async Task AuditAndUnitPages_ViewedRepeatedly_ParseTheResultOnce()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var api = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(api, await Uploads.ModelAsync(api), await Uploads.ImageSetAsync(api, 2), 2);
        await svc.WaitForEndAsync(api, id);
        var (key, _) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();
        var results = svc.App.Services.GetRequiredService<ParsedResults>();
        var before = results.Parses;

        for (int i = 0; i < 3; i++)
        {
            await browser.GetPageAsync($"/ui/audits/{id}");
            // The counting engine's result has no units: the unit page answers 404, from the same parsed result.
            await browser.GetPageAsync($"/ui/audits/{id}/units/0?layer=conv1", System.Net.HttpStatusCode.NotFound);
        }

        Assert.Equal(before + 1, results.Parses);
    }
}
