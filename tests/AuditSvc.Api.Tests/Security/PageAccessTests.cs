using System.Net;
using AuditSvc.Api.Tests.Ui;
using AuditSvc.Data.Teams;

namespace AuditSvc.Api.Tests.Security;

/// <summary>
/// The routes outside the OpenAPI document, listed by hand; RouteAccessTests fails when the app maps one that is
/// in neither list, so a new page cannot be forgotten here.
/// </summary>
internal static class UiTable
{
    /// <summary>Pages that need a reviewer session; each names team A's objects where its route takes them.</summary>
    public static readonly (string Method, string Template, string Sample)[] Routes =
    [
        ("GET", "/ui/audits", "/ui/audits?state=done"),
        ("GET", "/ui/audits/{id}", "/ui/audits/{audit}"),
        ("POST", "/ui/audits/{id}/reviews", "/ui/audits/{audit}/reviews"),
        ("GET", "/ui/audits/{id}/units/{unit}", "/ui/audits/{audit}/units/3?layer=conv1"),
        ("GET", "/ui/audits/{id}/exemplars/{item}", "/ui/audits/{audit}/exemplars/0?box=0,0,4,4"),
        ("GET", "/ui/audits/{id}/report", "/ui/audits/{audit}/report"),
        ("POST", "/ui/logout", "/ui/logout"),
    ];

    /// <summary>Routes open to anyone, by design: sign-in, the redirect at the root, health and the API's own description.</summary>
    public static readonly string[] Anonymous =
        ["GET /", "GET /health", "GET /ui/login", "POST /ui/login", "GET /openapi/{documentName}.json"];
}

public sealed class PageAccessTests(AccessFixture f) : IClassFixture<AccessFixture>
{
    [PgFact]
    public async Task Pages_NoSessionOrOnlyABearerKey_AreRefused()
    {
        var failures = new List<string>();
        using var anonymous = f.Client(null);
        using var bearerOnly = f.Client(f.OwnerKey); // the pages take the session cookie alone
        foreach (var client in new[] { anonymous, bearerOnly })
        {
            foreach (var (method, template, sample) in UiTable.Routes)
            {
                using var response = await client.SendAsync(new HttpRequestMessage(new HttpMethod(method), Path(sample)) { Content = method == "POST" ? Form() : null });
                if (!RefusedToSignIn(response)) failures.Add($"{method} {template}: {(int)response.StatusCode} {response.Headers.Location}");
            }
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
    }

    [PgFact]
    public async Task Pages_SessionOfARevokedKey_AreRefused()
    {
        var (key, info) = await BrowserSession.KeyAsync(f.Svc, "team-a", "revoked-reviewer");
        using var browser = new BrowserSession(f.Svc);
        (await browser.LoginAsync(key)).Dispose();
        var token = BrowserSession.TokenIn(await browser.GetPageAsync("/ui/audits"));
        await new ApiKeyStore(f.Svc.Db.DataSource).RevokeAsync(info.Prefix, CancellationToken.None);

        var failures = new List<string>();
        foreach (var (method, template, sample) in UiTable.Routes)
        {
            // A fresh jar each time: the first refusal also deletes the cookie, and every route must refuse on its own.
            using var again = new BrowserSession(f.Svc);
            foreach (System.Net.Cookie c in browser.Cookies.GetAllCookies()) again.Cookies.Add(c);
            using var response = await again.Client.SendAsync(new HttpRequestMessage(new HttpMethod(method), Path(sample)) { Content = method == "POST" ? Form(token) : null });
            if (!RefusedToSignIn(response)) failures.Add($"{method} {template}: {(int)response.StatusCode}");
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
    }

    [PgFact]
    public async Task Pages_OtherTeamsSessionOnOwnersAudit_AnswerNotFound()
    {
        var (key, _) = await BrowserSession.KeyAsync(f.Svc, "team-b", "curious");
        using var browser = new BrowserSession(f.Svc);
        (await browser.LoginAsync(key)).Dispose();
        var list = await browser.GetPageAsync("/ui/audits");
        Assert.DoesNotContain(f.AuditId.ToString(), list, StringComparison.OrdinalIgnoreCase);
        var token = BrowserSession.TokenIn(list);

        var failures = new List<string>();
        foreach (var (method, template, sample) in UiTable.Routes.Where(r => r.Template.Contains("{id}", StringComparison.Ordinal)))
        {
            var content = method == "POST" ? Form(token, ("finding", "0"), ("decision", "acceptable"), ("comment", "not ours")) : null;
            using var response = await browser.Client.SendAsync(new HttpRequestMessage(new HttpMethod(method), Path(sample)) { Content = content });
            if (response.StatusCode != HttpStatusCode.NotFound) failures.Add($"{method} {template}: {(int)response.StatusCode}, expected 404");
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
        // The same session reads its own team's list, so the 404s above are about the audit, not the session.
        Assert.Contains("team team-b", await browser.GetPageAsync("/ui/audits"), StringComparison.Ordinal);
    }

    [PgFact]
    public async Task Dashboard_NoKeyOrRevokedKeyFromThisMachine_IsRefused()
    {
        using var anonymous = f.Client(null);
        using var revoked = f.Client(f.RevokedKey);
        var (opKey, opInfo) = await BrowserSession.KeyAsync(f.Svc, "operators", "ops");
        using var operatorClient = f.Client(opKey);

        foreach (var path in new[] { "/hangfire", "/hangfire/jobs/enqueued", "/hangfire/servers" })
        {
            Assert.Equal(HttpStatusCode.Unauthorized, (await anonymous.GetAsync(path)).StatusCode);
            Assert.Equal(HttpStatusCode.Unauthorized, (await revoked.GetAsync(path)).StatusCode);
            Assert.Equal(HttpStatusCode.Forbidden, (await f.OtherApi.GetAsync(path)).StatusCode);
        }
        // Writing (re-queue, delete) is refused alike: these are the dashboard's own POST commands.
        foreach (var path in new[] { "/hangfire/jobs/enqueued/delete", "/hangfire/recurring/trigger" })
        {
            using var form = new FormUrlEncodedContent([KeyValuePair.Create("jobs[]", "1")]);
            Assert.Equal(HttpStatusCode.Unauthorized, (await anonymous.PostAsync(path, form)).StatusCode);
            Assert.Equal(HttpStatusCode.Unauthorized, (await revoked.PostAsync(path, form)).StatusCode);
        }
        Assert.Equal(HttpStatusCode.OK, (await operatorClient.GetAsync("/hangfire")).StatusCode);

        // An operator signed in through the pages opens it in a browser; once the key is revoked, no longer.
        using var browser = new BrowserSession(f.Svc);
        (await browser.LoginAsync(opKey)).Dispose();
        Assert.Equal(HttpStatusCode.OK, (await browser.Client.GetAsync("/hangfire")).StatusCode);
        await new ApiKeyStore(f.Svc.Db.DataSource).RevokeAsync(opInfo.Prefix, CancellationToken.None);
        Assert.Equal(HttpStatusCode.Unauthorized, (await browser.Client.GetAsync("/hangfire")).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await operatorClient.GetAsync("/hangfire")).StatusCode);
    }

    private string Path(string sample) => sample.Replace("{audit}", f.AuditId.ToString(), StringComparison.Ordinal);

    private static FormUrlEncodedContent Form(string? token = null, params (string Name, string Value)[] fields) =>
        new((token is null ? fields : fields.Prepend((Name: "__af", Value: token))).Select(x => KeyValuePair.Create(x.Name, x.Value)));

    /// <summary>A refusal that sends the browser to sign in (302 to /ui/login), or a plain 401/403; never a page.</summary>
    private static bool RefusedToSignIn(HttpResponseMessage r) =>
        r.StatusCode is HttpStatusCode.Unauthorized or HttpStatusCode.Forbidden
        || (r.StatusCode == HttpStatusCode.Redirect && r.Headers.Location?.OriginalString.StartsWith("/ui/login", StringComparison.Ordinal) == true)
        || (r.StatusCode == HttpStatusCode.Redirect && r.Headers.Location?.AbsolutePath == "/ui/login");
}
