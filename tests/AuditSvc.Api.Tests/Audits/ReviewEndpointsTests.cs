using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Api.Tests.Ui;
using AuditSvc.Data.Teams;

namespace AuditSvc.Api.Tests.Audits;

public sealed class ReviewEndpointsTests
{
    /// <summary>A client signed in with a new key named <paramref name="name"/>, and the key as `keys list` shows it.</summary>
    internal static async Task<(HttpClient Client, ApiKeyInfo Key)> SignedClientAsync(ServiceUnderTest svc, string team, string name)
    {
        var (key, info) = await BrowserSession.KeyAsync(svc, team, name);
        var client = new HttpClient { BaseAddress = svc.Address };
        client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return (client, info);
    }

    /// <summary>A done audit of the counting engine: one finding (ordinal 0, stamp=yes), engine verdict pass.</summary>
    internal static async Task<Guid> DoneAuditAsync(ServiceUnderTest svc, HttpClient client)
    {
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);
        Assert.Equal("done", (await svc.WaitForEndAsync(client, id)).State);
        return id;
    }

    internal static async Task AssertProblemAsync(HttpResponseMessage response, HttpStatusCode status, string field)
    {
        var problem = await response.Content.ReadFromJsonAsync<JsonElement>();
        Assert.True(status == response.StatusCode, $"{(int)response.StatusCode}: {problem}");
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType!.MediaType);
        Assert.True(problem.GetProperty("errors").TryGetProperty(field, out _), problem.ToString());
    }

    [PgFact]
    public async Task Review_OnAFindingOfADoneAudit_IsListedWithIt()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        var (client, key) = await SignedClientAsync(svc, "team-a", "rita");
        using var _ = client;
        var id = await DoneAuditAsync(svc, client);
        var findings = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/findings");

        var added = await client.PostAsJsonAsync($"/api/audits/{id}/reviews",
            new { finding = findings[0].GetProperty("ordinal").GetInt32(), decision = "spurious", reason = "stamp in the corner" });

        Assert.Equal(HttpStatusCode.Created, added.StatusCode);
        var listed = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews");
        Assert.Equal(($"rita ({key.Prefix})", "spurious", 0, "finding", "stamp in the corner"),
            (listed[0].GetProperty("reviewer").GetString(), listed[0].GetProperty("decision").GetString(), listed[0].GetProperty("finding").GetInt32(),
             listed[0].GetProperty("subject").GetString(), listed[0].GetProperty("reason").GetString()));
        Assert.Equal("stamp", findings[0].GetProperty("attribute").GetString());
    }

    [PgFact]
    public async Task Review_ForgedReviewerField_IsIgnoredAndTheSignerIsTheKey()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        var (client, key) = await SignedClientAsync(svc, "team-a", "ci-pipeline");
        using var _ = client;
        var id = await DoneAuditAsync(svc, client);

        var added = await client.PostAsJsonAsync($"/api/audits/{id}/reviews",
            new { cue = "stamp=yes", decision = "acceptable", reason = "the stamp is the grade mark", reviewer = "the head of quality" });

        Assert.Equal(HttpStatusCode.Created, added.StatusCode);
        var body = await added.Content.ReadFromJsonAsync<JsonElement>();
        var listed = (await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews"))[0];
        foreach (var r in new[] { body, listed })
        {
            Assert.Equal($"ci-pipeline ({key.Prefix})", r.GetProperty("reviewer").GetString());
            Assert.Equal((key.Id, "ci-pipeline", key.Prefix), (r.GetProperty("signer").GetProperty("keyId").GetGuid(),
                r.GetProperty("signer").GetProperty("name").GetString(), r.GetProperty("signer").GetProperty("prefix").GetString()));
            Assert.False(r.GetProperty("legacy").GetBoolean());
        }
        Assert.DoesNotContain("head of quality", await (await client.GetAsync($"/api/audits/{id}/reviews")).Content.ReadAsStringAsync(), StringComparison.Ordinal);
        await using var count = svc.Db.DataSource.CreateCommand("SELECT count(*) FROM reviews WHERE reviewer IS NOT NULL OR key_id <> $1");
        count.Parameters.AddWithValue(key.Id);
        Assert.Equal(0L, await count.ExecuteScalarAsync()); // no free-text reviewer stored, only the key
    }

    [PgFact]
    public async Task Reviews_AuditOfAnotherTeam_AnswerNotFound()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var owner = await svc.ClientAsync("team-a");
        using var other = await svc.ClientAsync("team-b");
        var id = await DoneAuditAsync(svc, owner);

        Assert.Equal(HttpStatusCode.NotFound, (await other.GetAsync($"/api/audits/{id}/findings")).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await other.GetAsync($"/api/audits/{id}/reviews")).StatusCode);
        var post = await other.PostAsJsonAsync($"/api/audits/{id}/reviews", new { cue = "stamp=yes", decision = "spurious" });
        var overridden = await other.PostAsJsonAsync($"/api/audits/{id}/reviews", new { decision = "override", verdict = "block", reason = "mine now" });
        Assert.Equal((HttpStatusCode.NotFound, HttpStatusCode.NotFound), (post.StatusCode, overridden.StatusCode));
        Assert.Equal(0, (await owner.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews")).GetArrayLength());
        Assert.Equal("pass", (await owner.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/verdict")).GetProperty("verdict").GetString());
    }

    [PgFact]
    public async Task Review_UnknownAudit_AnswersNotFound()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");

        var post = await client.PostAsJsonAsync($"/api/audits/{Guid.NewGuid()}/reviews", new { finding = 0, decision = "needs-data" });

        Assert.Equal(HttpStatusCode.NotFound, post.StatusCode);
    }

    [PgFact]
    public async Task Review_UnknownDecision_Returns400NamingDecision()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var response = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { finding = 0, decision = "maybe" });
        var oldWord = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { finding = 0, decision = "confirmed" });

        await AuditEndpointsTests.AssertFieldProblemAsync(response, "decision");
        await AuditEndpointsTests.AssertFieldProblemAsync(oldWord, "decision"); // the old words stay on old rows only
    }

    [PgFact]
    public async Task Review_OnACueGroup_IsListedWithTheCue()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var client = await svc.ClientAsync("team-a");
        var id = await DoneAuditAsync(svc, client);

        var added = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { cue = "stamp=yes", decision = "spurious", reason = "corner stamp" });
        var bad = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { cue = "stamp", decision = "acceptable", reason = "x" });

        Assert.Equal(HttpStatusCode.Created, added.StatusCode);
        await AuditEndpointsTests.AssertFieldProblemAsync(bad, "cue");
        var listed = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews");
        Assert.Equal(("stamp=yes", "cue"), (listed[0].GetProperty("cue").GetString(), listed[0].GetProperty("subject").GetString()));
    }

    [PgFact]
    public async Task Review_FindingOrCueNotInTheAudit_Returns422NamingTheField()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var client = await svc.ClientAsync("team-a");
        var id = await DoneAuditAsync(svc, client);

        var finding = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { finding = 5, decision = "spurious" });
        var cue = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { cue = "stamp=maybe", decision = "spurious" });
        var attribute = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { cue = "backdrop=yes", decision = "needs-data" });

        await AssertProblemAsync(finding, HttpStatusCode.UnprocessableEntity, "finding");
        await AssertProblemAsync(cue, HttpStatusCode.UnprocessableEntity, "cue");
        await AssertProblemAsync(attribute, HttpStatusCode.UnprocessableEntity, "cue");
        Assert.Equal(0, (await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews")).GetArrayLength());
    }

    [PgFact]
    public async Task Review_AcceptableOrOverrideWithoutReason_Returns422NamingReason()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var client = await svc.ClientAsync("team-a");
        var id = await DoneAuditAsync(svc, client);

        var acceptable = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { cue = "stamp=yes", decision = "acceptable", reason = "   " });
        var overridden = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { decision = "override", verdict = "block" });
        var noVerdict = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { decision = "override", reason = "because" });

        await AssertProblemAsync(acceptable, HttpStatusCode.UnprocessableEntity, "reason");
        await AssertProblemAsync(overridden, HttpStatusCode.UnprocessableEntity, "reason");
        await AssertProblemAsync(noVerdict, HttpStatusCode.UnprocessableEntity, "verdict");
        Assert.Equal(0, (await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews")).GetArrayLength());
    }

    [PgFact]
    public async Task Override_SameAsTheEngineOrBeforeTheAuditIsDone_IsRefused()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var client = await svc.ClientAsync("team-a");
        var id = await DoneAuditAsync(svc, client);

        var same = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { decision = "override", verdict = "pass", reason = "fine" });

        await AssertProblemAsync(same, HttpStatusCode.UnprocessableEntity, "verdict");
    }

    [PgFact]
    public async Task Override_QueuedAudit_Returns409()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var early = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { decision = "override", verdict = "block", reason = "not waiting" });

        await AssertProblemAsync(early, HttpStatusCode.Conflict, "verdict");
    }

    [PgFact]
    public async Task Override_Signed_IsShownInTheVerdictAndSupersedesTheEarlierOne()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        var (client, key) = await SignedClientAsync(svc, "team-a", "rita");
        using var _ = client;
        var id = await DoneAuditAsync(svc, client);

        var first = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { decision = "override", verdict = "block", reason = "stamp seen on 3 of 9 exemplars" });
        var second = await client.PostAsJsonAsync($"/api/audits/{id}/reviews", new { decision = "override", verdict = "block", reason = "confirmed with the line lead" });

        Assert.Equal((HttpStatusCode.Created, HttpStatusCode.Created), (first.StatusCode, second.StatusCode));
        var firstId = (await first.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("id").GetGuid();
        var verdict = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/verdict");
        Assert.Equal(("block", "pass", true), (verdict.GetProperty("verdict").GetString(), verdict.GetProperty("engineVerdict").GetString(),
            verdict.GetProperty("overridden").GetBoolean()));
        var o = verdict.GetProperty("override");
        Assert.Equal(("block", "confirmed with the line lead", $"rita ({key.Prefix})", key.Id),
            (o.GetProperty("verdict").GetString(), o.GetProperty("reason").GetString(), o.GetProperty("reviewer").GetString(),
             o.GetProperty("signer").GetProperty("keyId").GetGuid()));
        // The audit itself and the team's list say the same: the verdict that stands, the engine's beside it.
        var audit = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}");
        Assert.Equal(("block", "pass", true), (audit.GetProperty("verdict").GetString(), audit.GetProperty("engineVerdict").GetString(),
            audit.GetProperty("overridden").GetBoolean()));
        var listed = (await client.GetFromJsonAsync<JsonElement>("/api/audits")).EnumerateArray().Single(a => a.GetProperty("id").GetGuid() == id);
        Assert.Equal(("block", "pass"), (listed.GetProperty("verdict").GetString(), listed.GetProperty("engineVerdict").GetString()));
        var history = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews");
        Assert.Equal(("verdict", "override"), (history[0].GetProperty("subject").GetString(), history[0].GetProperty("decision").GetString()));
        Assert.Equal(history[1].GetProperty("id").GetGuid(), history[0].GetProperty("supersededBy").GetProperty("id").GetGuid());
        Assert.Equal($"rita ({key.Prefix})", history[0].GetProperty("supersededBy").GetProperty("reviewer").GetString());
        Assert.Equal(firstId, history[1].GetProperty("supersedes").GetGuid());
        Assert.Equal(JsonValueKind.Null, history[1].GetProperty("supersededBy").ValueKind);
    }
}
