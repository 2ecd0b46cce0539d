using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Audits;

namespace AuditSvc.Api.Tests.Hosting;

public sealed class PagingTests
{
    [PgFact]
    public async Task Models_ListedInPages_FullPageLinksTheNext()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        for (int i = 0; i < 3; i++) await Uploads.ModelAsync(client, [1, 2, 3, (byte)i]);

        using var first = await client.GetAsync("/api/models?limit=2");
        var next = first.Headers.GetValues("Link").Single();
        using var second = await client.GetAsync(next[1..next.IndexOf('>', StringComparison.Ordinal)]);

        Assert.Equal(2, (await first.Content.ReadFromJsonAsync<JsonElement>()).GetArrayLength());
        Assert.Equal("</api/models?limit=2&offset=2>; rel=\"next\"", next);
        Assert.Equal(1, (await second.Content.ReadFromJsonAsync<JsonElement>()).GetArrayLength());
        Assert.False(second.Headers.Contains("Link"));
        Assert.Equal(3, (await client.GetFromJsonAsync<JsonElement>("/api/models")).GetArrayLength());
    }

    [PgFact]
    public async Task Lists_PageOutOfBounds_Answer400NamingTheField()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");

        await AuditEndpointsTests.AssertFieldProblemAsync(await client.GetAsync("/api/models?limit=0"), "limit");
        await AuditEndpointsTests.AssertFieldProblemAsync(await client.GetAsync("/api/image-sets?limit=100000"), "limit");
        await AuditEndpointsTests.AssertFieldProblemAsync(await client.GetAsync("/api/audits?offset=-1"), "offset");
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/api/image-sets?limit=500&offset=0")).StatusCode);
    }
}
