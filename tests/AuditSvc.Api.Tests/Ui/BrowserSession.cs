using System.Net;
using System.Text.RegularExpressions;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Data.Teams;

namespace AuditSvc.Api.Tests.Ui;

/// <summary>
/// What a browser does with the pages, done over HTTP: a cookie jar, no automatic redirects (so tests see them),
/// and the antiforgery field read from the form the page served.
/// </summary>
internal sealed partial class BrowserSession : IDisposable
{
    private readonly HttpClientHandler _handler;

    public BrowserSession(ServiceUnderTest svc)
    {
        _handler = new HttpClientHandler { CookieContainer = new CookieContainer(), AllowAutoRedirect = false, UseCookies = true };
        Client = new HttpClient(_handler) { BaseAddress = svc.Address };
        Address = svc.Address;
    }

    public HttpClient Client { get; }
    public Uri Address { get; }
    public CookieContainer Cookies => _handler.CookieContainer;

    public Cookie? Session => Cookies.GetCookies(Address).FirstOrDefault(c => c.Name == "auditsvc.session");

    /// <summary>A new key named <paramref name="name"/> for <paramref name="team"/> (created when new).</summary>
    public static async Task<(string Key, ApiKeyInfo Info)> KeyAsync(ServiceUnderTest svc, string team, string name)
    {
        var t = await new TeamStore(svc.Db.DataSource).EnsureAsync(team, CancellationToken.None);
        return await new ApiKeyStore(svc.Db.DataSource).CreateAsync(t.Id, name, CancellationToken.None);
    }

    public async Task<string> GetPageAsync(string path, HttpStatusCode expected = HttpStatusCode.OK)
    {
        using var response = await Client.GetAsync(path);
        var text = await response.Content.ReadAsStringAsync();
        Assert.True(response.StatusCode == expected, $"GET {path}: {(int)response.StatusCode}, expected {(int)expected}\n{text}");
        return text;
    }

    public static string TokenIn(string html)
    {
        var m = TokenField().Match(html);
        Assert.True(m.Success, "no antiforgery field in the page");
        return WebUtility.HtmlDecode(m.Groups[1].Value);
    }

    public Task<HttpResponseMessage> PostFormAsync(string path, params (string Name, string Value)[] fields) =>
        Client.PostAsync(path, new FormUrlEncodedContent(fields.Select(f => KeyValuePair.Create(f.Name, f.Value))));

    public async Task<HttpResponseMessage> LoginAsync(string key)
    {
        var token = TokenIn(await GetPageAsync("/ui/login"));
        return await PostFormAsync("/ui/login", ("__af", token), ("key", key), ("returnUrl", "/ui/audits"));
    }

    public void Dispose()
    {
        Client.Dispose();
        _handler.Dispose();
    }

    [GeneratedRegex("name=\"__af\" value=\"([^\"]+)\"")]
    private static partial Regex TokenField();
}
