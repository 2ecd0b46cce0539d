using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Audits;
using AuditSvc.Api.Tests.Hosting;

namespace AuditSvc.Api.Tests.Ui;

public sealed class AuditPagesTests
{
    [PgFact]
    public async Task Review_PostedThroughTheForm_AppearsOnThePageAndThroughTheApi()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var api = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(api, await Uploads.ModelAsync(api), await Uploads.ImageSetAsync(api, 2), 2);
        await svc.WaitForEndAsync(api, id);
        var (key, info) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();
        var page = await browser.GetPageAsync($"/ui/audits/{id}");
        var token = BrowserSession.TokenIn(page);

        using var onFinding = await browser.PostFormAsync($"/ui/audits/{id}/reviews",
            ("__af", token), ("finding", "0"), ("decision", "spurious"), ("comment", "stamp <b>in</b> the corner"));
        using var onCue = await browser.PostFormAsync($"/ui/audits/{id}/reviews",
            ("__af", token), ("cue", "stamp=yes"), ("decision", "needs-data"), ("comment", ""));

        Assert.Equal(HttpStatusCode.SeeOther, onFinding.StatusCode);
        var after = await browser.GetPageAsync($"/ui/audits/{id}");
        Assert.Contains($"rita ({info.Prefix})", after, StringComparison.Ordinal);
        Assert.Contains("stamp &lt;b&gt;in&lt;/b&gt; the corner", after, StringComparison.Ordinal); // escaped, never markup
        Assert.DoesNotContain("<b>in</b>", after, StringComparison.Ordinal);
        Assert.Contains("Needs data", after, StringComparison.Ordinal);
        var listed = await api.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews");
        Assert.Equal(2, listed.GetArrayLength());
        Assert.Equal(("spurious", 0, $"rita ({info.Prefix})"),
            (listed[0].GetProperty("decision").GetString(), listed[0].GetProperty("finding").GetInt32(), listed[0].GetProperty("reviewer").GetString()));
        Assert.Equal(("needs-data", "stamp=yes"), (listed[1].GetProperty("decision").GetString(), listed[1].GetProperty("cue").GetString()));
        // Back to the page naming the review just recorded, at its cue's card (or the history for a finding).
        Assert.Equal($"/ui/audits/{id}?recorded={listed[0].GetProperty("id").GetGuid()}#history", onFinding.Headers.Location!.OriginalString);
        Assert.Equal($"/ui/audits/{id}?recorded={listed[1].GetProperty("id").GetGuid()}#cue-stamp-yes", onCue.Headers.Location!.OriginalString);
    }

    [PgFact]
    public async Task Override_ThroughTheForm_IsShownAboveTheVerdictAndInTheHistory()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var api = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(api, await Uploads.ModelAsync(api), await Uploads.ImageSetAsync(api, 2), 2);
        Assert.Equal("pass", (await svc.WaitForEndAsync(api, id)).Verdict); // the counting engine passes a complete audit
        var (key, info) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();
        var before = await browser.GetPageAsync($"/ui/audits/{id}");
        var token = BrowserSession.TokenIn(before);
        Assert.Contains("Sign and set the verdict to block", before, StringComparison.Ordinal);

        using var bare = await browser.PostFormAsync($"/ui/audits/{id}/reviews", ("__af", token), ("decision", "override"), ("verdict", "block"), ("reason", " "));
        using var done = await browser.PostFormAsync($"/ui/audits/{id}/reviews", ("__af", token), ("decision", "override"), ("verdict", "block"),
            ("reason", "site <i>B</i> images not yet reviewed"), ("reviewer", "someone else"));

        Assert.Equal((HttpStatusCode)422, bare.StatusCode);
        Assert.Equal(HttpStatusCode.SeeOther, done.StatusCode);
        var after = await browser.GetPageAsync(done.Headers.Location!.OriginalString);
        Assert.Contains("Verdict overridden to BLOCK</strong> by rita (" + info.Prefix + ")", after, StringComparison.Ordinal);
        Assert.Contains("site &lt;i&gt;B&lt;/i&gt; images not yet reviewed", after, StringComparison.Ordinal);
        Assert.Contains("Verdict override → block", after, StringComparison.Ordinal);
        Assert.DoesNotContain("someone else", after, StringComparison.Ordinal);
        Assert.Equal("block", (await api.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/verdict")).GetProperty("verdict").GetString());
        var list = await browser.GetPageAsync("/ui/audits");
        Assert.Contains("✕ block</span> <span class=\"small muted\">overridden; engine: pass</span>", list, StringComparison.Ordinal);
    }

    [PgFact]
    public async Task Review_PostWithoutAntiforgeryToken_IsRefusedAndNotStored()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var api = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(api, await Uploads.ModelAsync(api), await Uploads.ImageSetAsync(api, 2), 2);
        await svc.WaitForEndAsync(api, id);
        var (key, _) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();
        await browser.GetPageAsync($"/ui/audits/{id}");

        using var response = await browser.PostFormAsync($"/ui/audits/{id}/reviews", ("finding", "0"), ("decision", "acceptable"));

        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.Equal(0, (await api.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews")).GetArrayLength());
    }

    [PgFact]
    public async Task AuditPage_AnotherTeamsAudit_AnswersNotFound()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var owner = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(owner, await Uploads.ModelAsync(owner), await Uploads.ImageSetAsync(owner, 2), 2);
        var (key, _) = await BrowserSession.KeyAsync(svc, "team-b", "eve");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();
        var token = BrowserSession.TokenIn(await browser.GetPageAsync("/ui/audits"));

        var page = await browser.GetPageAsync($"/ui/audits/{id}", HttpStatusCode.NotFound);
        using var post = await browser.PostFormAsync($"/ui/audits/{id}/reviews", ("__af", token), ("finding", "0"), ("decision", "acceptable"));

        Assert.Contains("No audit", page, StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.NotFound, post.StatusCode);
        Assert.Equal(0, (await owner.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews")).GetArrayLength());
    }

    [PgFact]
    public async Task AuditPage_QueuedAudit_ShowsProgressAndRefreshes()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var api = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(api, await Uploads.ModelAsync(api), await Uploads.ImageSetAsync(api, 2), 2);
        var (key, _) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();

        var page = await browser.GetPageAsync($"/ui/audits/{id}");
        var filtered = await browser.GetPageAsync("/ui/audits?state=done");

        Assert.Contains("<meta http-equiv=\"refresh\"", page, StringComparison.Ordinal);
        Assert.Contains("0 of 4", page, StringComparison.Ordinal);
        Assert.Contains(">queued<", page, StringComparison.Ordinal);
        Assert.DoesNotContain(id.ToString(), filtered, StringComparison.Ordinal);
        await browser.GetPageAsync("/ui/audits?verdict=maybe", HttpStatusCode.BadRequest);
    }
}
