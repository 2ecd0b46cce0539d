using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;

namespace AuditSvc.Api.Tests.Audits;

public sealed class ReviewEndpointsTests
{
    [PgFact]
    public async Task Review_OnAFindingOfADoneAudit_IsListedWithIt()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);
        await svc.WaitForEndAsync(client, id);
        var findings = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/findings");

        var added = await client.PostAsJsonAsync($"/api/audits/{id}/reviews",
            new { finding = findings[0].GetProperty("ordinal").GetInt32(), reviewer = "rita", decision = "confirmed", note = "stamp in the corner" });

        Assert.Equal(HttpStatusCode.Created, added.StatusCode);
        var listed = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews");
        Assert.Equal(("rita", "confirmed", 0), (listed[0].GetProperty("reviewer").GetString(), listed[0].GetProperty("decision").GetString(), listed[0].GetProperty("finding").GetInt32()));
        Assert.Equal("stamp", findings[0].GetProperty("attribute").GetString());
    }

    [PgFact]
    public async Task Reviews_AuditOfAnotherTeam_AnswerNotFound()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var owner = await svc.ClientAsync("team-a");
        using var other = await svc.ClientAsync("team-b");
        var id = await AuditEndpointsTests.SubmitAsync(owner, await Uploads.ModelAsync(owner), await Uploads.ImageSetAsync(owner, 2), 2);

        Assert.Equal(HttpStatusCode.NotFound, (await other.GetAsync($"/api/audits/{id}/findings")).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await other.GetAsync($"/api/audits/{id}/reviews")).StatusCode);
        var post = await other.PostAsJsonAsync($"/api/audits/{id}/reviews", new { reviewer = "eve", decision = "dismissed" });
        Assert.Equal(HttpStatusCode.NotFound, post.StatusCode);
        Assert.Equal(0, (await owner.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews")).GetArrayLength());
    }

    [PgFact]
    public async Task Review_UnknownDecision_Returns400NamingDecision()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var response = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { reviewer = "rita", decision = "maybe" });

        await AuditEndpointsTests.AssertFieldProblemAsync(response, "decision");
    }

    [PgFact]
    public async Task Review_OnACueGroup_IsListedWithTheCue()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var added = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { cue = "stamp=yes", reviewer = "rita", decision = "spurious-cue", note = "corner stamp" });
        var bad = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { cue = "stamp", reviewer = "rita", decision = "acceptable" });

        Assert.Equal(HttpStatusCode.Created, added.StatusCode);
        await AuditEndpointsTests.AssertFieldProblemAsync(bad, "cue");
        var listed = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews");
        Assert.Equal("stamp=yes", listed[0].GetProperty("cue").GetString());
    }
}
