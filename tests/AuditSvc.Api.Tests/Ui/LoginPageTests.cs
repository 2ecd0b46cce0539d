using System.Net;
using System.Net.Http.Headers;
using AuditSvc.Api.Pages;
using AuditSvc.Api.Tests.Audits;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Data.Teams;

namespace AuditSvc.Api.Tests.Ui;

public sealed class LoginPageTests
{
    [PgFact]
    public async Task Login_GoodKey_SetsStrictHttpOnlyCookieAndListsOnlyTheTeamsAudits()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var ownerApi = await svc.ClientAsync("team-a");
        using var otherApi = await svc.ClientAsync("team-b");
        var mine = await AuditEndpointsTests.SubmitAsync(ownerApi, await Uploads.ModelAsync(ownerApi), await Uploads.ImageSetAsync(ownerApi, 2), 2);
        var theirs = await AuditEndpointsTests.SubmitAsync(otherApi, await Uploads.ModelAsync(otherApi), await Uploads.ImageSetAsync(otherApi, 2), 2);
        var (key, _) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);

        using var login = await browser.LoginAsync(key);

        Assert.Equal(HttpStatusCode.SeeOther, login.StatusCode);
        Assert.Equal("/ui/audits", login.Headers.Location!.OriginalString);
        var setCookie = login.Headers.GetValues("Set-Cookie").Single(c => c.StartsWith("auditsvc.session=", StringComparison.Ordinal));
        Assert.Contains("httponly", setCookie, StringComparison.OrdinalIgnoreCase);
        Assert.Contains("samesite=strict", setCookie, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain(key, setCookie, StringComparison.Ordinal);
        var list = await browser.GetPageAsync("/ui/audits");
        Assert.Contains($"/ui/audits/{mine}", list, StringComparison.Ordinal);
        Assert.DoesNotContain($"/ui/audits/{theirs}", list, StringComparison.Ordinal);
        Assert.Contains("team team-a", list, StringComparison.Ordinal);
    }

    [PgFact]
    public async Task Login_BadKey_IsRefusedWithAMessageAndNoSession()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        var (key, _) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        var wrongSecret = key[..^4] + (key.EndsWith("AAAA", StringComparison.Ordinal) ? "BBBB" : "AAAA"); // right prefix, wrong secret
        using var browser = new BrowserSession(svc);

        foreach (var attempt in new[] { "not-a-key", wrongSecret })
        {
            using var response = await browser.LoginAsync(attempt);
            var page = await response.Content.ReadAsStringAsync();
            Assert.Equal(HttpStatusCode.Unauthorized, response.StatusCode);
            Assert.Contains("That key was not accepted", page, StringComparison.Ordinal);
            Assert.Null(browser.Session);
        }
        Assert.Equal(HttpStatusCode.Redirect, (await browser.Client.GetAsync("/ui/audits")).StatusCode);
    }

    [PgFact]
    public async Task Login_PostWithoutAntiforgeryToken_IsRefused()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        var (key, _) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        await browser.GetPageAsync("/ui/login"); // holds the antiforgery cookie, as a browser would; only the form field is missing

        using var response = await browser.PostFormAsync("/ui/login", ("key", key));

        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.Contains("anti-forgery token", await response.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        Assert.Null(browser.Session);
    }

    [PgFact]
    public async Task Session_KeyRevoked_RefusedOnTheNextRequest()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        var (key, info) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();
        await browser.GetPageAsync("/ui/audits");

        Assert.True(await new ApiKeyStore(svc.Db.DataSource).RevokeAsync(info.Prefix, CancellationToken.None));
        using var after = await browser.Client.GetAsync("/ui/audits");

        Assert.Equal(HttpStatusCode.Redirect, after.StatusCode);
        Assert.StartsWith("/ui/login", after.Headers.Location!.AbsolutePath, StringComparison.Ordinal);
    }

    [PgFact]
    public async Task Api_WithTheSessionCookieOnly_Answers401()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        var (key, _) = await BrowserSession.KeyAsync(svc, "team-a", "rita");
        using var browser = new BrowserSession(svc);
        (await browser.LoginAsync(key)).Dispose();
        Assert.NotNull(browser.Session);

        Assert.Equal(HttpStatusCode.Unauthorized, (await browser.Client.GetAsync("/api/audits")).StatusCode);
        browser.Client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        Assert.Equal(HttpStatusCode.OK, (await browser.Client.GetAsync("/api/audits")).StatusCode);
    }

    [PgFact]
    public async Task Pages_WithoutSession_RedirectToLoginAndRootToAudits()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var browser = new BrowserSession(svc);

        using var root = await browser.Client.GetAsync("/");
        using var list = await browser.Client.GetAsync("/ui/audits?state=done");

        Assert.Equal("/ui/audits", root.Headers.Location!.OriginalString);
        Assert.Equal(HttpStatusCode.Redirect, list.StatusCode);
        Assert.Equal("/ui/login", list.Headers.Location!.AbsolutePath);
        Assert.Contains("returnUrl=%2Fui%2Faudits%3Fstate%3Ddone", list.Headers.Location!.Query, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("/ui/audits/1", "/ui/audits/1")]
    [InlineData("https://elsewhere.example/ui/x", "/ui/audits")]
    [InlineData("//elsewhere.example/ui/", "/ui/audits")]
    [InlineData("/ui//elsewhere.example", "/ui/audits")]
    [InlineData("/ui/\\elsewhere", "/ui/audits")]
    [InlineData(null, "/ui/audits")]
    public void LocalOrDefault_AnyUrl_OnlyThisServicesPages(string? url, string expected) =>
        Assert.Equal(expected, LoginPage.LocalOrDefault(url));
}
