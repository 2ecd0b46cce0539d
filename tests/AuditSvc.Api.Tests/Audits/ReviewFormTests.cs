using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Api.Tests.Ui;

namespace AuditSvc.Api.Tests.Audits;

/// <summary>The browser form's reviews: signed with the session's key and checked by the same rules as the REST API.</summary>
public sealed class ReviewFormTests
{
    [PgFact]
    public async Task FormReview_ForgedReviewerAndOldWords_SignedWithTheSessionKeyOrRefused()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var api = await svc.ClientAsync("team-a");
        var id = await ReviewEndpointsTests.DoneAuditAsync(svc, api);
        var (key, info) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();
        var token = BrowserSession.TokenIn(await browser.GetPageAsync("/ui/audits")); // the form's rules, not the page's drawing

        using var forged = await browser.PostFormAsync($"/ui/audits/{id}/reviews",
            ("__af", token), ("cue", "stamp=yes"), ("decision", "spurious"), ("reviewer", "the head of quality"), ("reason", "corner stamp"));
        using var oldWord = await browser.PostFormAsync($"/ui/audits/{id}/reviews", ("__af", token), ("finding", "0"), ("decision", "spurious-cue"));
        using var noReason = await browser.PostFormAsync($"/ui/audits/{id}/reviews", ("__af", token), ("finding", "0"), ("decision", "acceptable"), ("comment", " "));
        using var unknownCue = await browser.PostFormAsync($"/ui/audits/{id}/reviews", ("__af", token), ("cue", "stamp=no"), ("decision", "spurious"));
        using var overridden = await browser.PostFormAsync($"/ui/audits/{id}/reviews",
            ("__af", token), ("decision", "override"), ("verdict", "block"), ("reason", "stamp seen on the line"));

        Assert.Equal(HttpStatusCode.SeeOther, forged.StatusCode);
        Assert.StartsWith($"/ui/audits/{id}?recorded=", forged.Headers.Location!.OriginalString, StringComparison.Ordinal);
        Assert.EndsWith("#cue-stamp-yes", forged.Headers.Location!.OriginalString, StringComparison.Ordinal);
        Assert.Equal((HttpStatusCode.BadRequest, HttpStatusCode.UnprocessableEntity, HttpStatusCode.UnprocessableEntity),
            (oldWord.StatusCode, noReason.StatusCode, unknownCue.StatusCode));
        Assert.Contains("reason", await noReason.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.SeeOther, overridden.StatusCode);
        var listed = await api.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/reviews");
        Assert.Equal(2, listed.GetArrayLength());
        foreach (var r in listed.EnumerateArray())
            Assert.Equal((info.Id, $"rita ({info.Prefix})"), (r.GetProperty("signer").GetProperty("keyId").GetGuid(), r.GetProperty("reviewer").GetString()));
        Assert.Equal(("block", "pass"), ((await api.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/verdict")).GetProperty("verdict").GetString(),
            (await api.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/verdict")).GetProperty("engineVerdict").GetString()));
    }

    [PgFact]
    public async Task OpenApi_ReviewContract_HasNoReviewerFieldAndShowsTheSigner()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var anonymous = new HttpClient { BaseAddress = svc.Address };

        var doc = await anonymous.GetFromJsonAsync<JsonElement>("/openapi/v1.json");

        var schemas = doc.GetProperty("components").GetProperty("schemas");
        var request = schemas.GetProperty("AddReview").GetProperty("properties");
        var response = schemas.GetProperty("ReviewResponse").GetProperty("properties");
        Assert.False(request.TryGetProperty("reviewer", out _), request.ToString());
        Assert.True(request.TryGetProperty("reason", out _) && request.TryGetProperty("verdict", out _), request.ToString());
        Assert.True(response.TryGetProperty("signer", out _) && response.TryGetProperty("supersededBy", out _), response.ToString());
        Assert.True(schemas.GetProperty("VerdictResponse").GetProperty("properties").TryGetProperty("engineVerdict", out _));
    }
}
