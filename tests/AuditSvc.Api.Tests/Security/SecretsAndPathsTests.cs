using System.IO.Compression;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Api.Tests.Ui;
using Microsoft.AspNetCore.Hosting;
using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;

namespace AuditSvc.Api.Tests.Security;

/// <summary>
/// Keys and the connection string never reach a log line or a problem response; server paths never reach a problem
/// response. The service runs with the real engine (its errors name files) and every log line captured at Debug.
/// </summary>
public sealed class SecretsAndPathsTests
{
    private const string PasswordCanary = "pw-canary-5c1e0f"; // the cluster trusts loopback, so any password connects

    [PgFact]
    public async Task FailingAndSucceedingRequests_NeverShowKeysConnectionStringOrServerPaths()
    {
        var logs = new CapturedLogs();
        await using var db = await TestDatabase.CreateAsync(migrate: false);
        var root = Directory.CreateTempSubdirectory("auditsvc-secrets-").FullName;
        var connection = db.ConnectionString + ";Password=" + PasswordCanary;
        var settings = ServiceUnderTest.Settings(db, root, 1);
        settings["AUDITSVC_DB"] = connection;
        await using var app = ServiceHost.BuildApi([], b =>
        {
            b.Configuration.AddInMemoryCollection(settings);
            b.WebHost.UseUrls("http://127.0.0.1:0");
            b.Logging.ClearProviders().AddProvider(logs).SetMinimumLevel(LogLevel.Debug);
            b.Services.AddSingleton<IAuditEngine, ComputeEngine>();
        });
        await app.StartAsync();
        try
        {
            var address = ServiceUnderTest.AddressOf(app);
            var (key, info) = await KeyAsync(db, "team-a", "owner");
            var (revoked, revokedInfo) = await KeyAsync(db, "team-a", "leaver");
            await new Data.Teams.ApiKeyStore(db.DataSource).RevokeAsync(revokedInfo.Prefix, CancellationToken.None);
            var wrongSecret = key[..^6] + "zzzzzz"; // the right prefix with a wrong secret
            var secrets = new[] { key, revoked, wrongSecret, key[(info.Prefix.Length + 5)..], PasswordCanary, connection, db.ConnectionString };

            var answers = new List<(string What, HttpResponseMessage Response, string Body)>();
            async Task Send(string what, HttpClient c, HttpRequestMessage r)
            {
                var response = await c.SendAsync(r);
                answers.Add((what, response, await response.Content.ReadAsStringAsync()));
            }

            using var good = Client(address, key);
            foreach (var (name, k) in new[] { ("revoked", revoked), ("wrong secret", wrongSecret), ("no key", null), ("garbage", "ask_" + new string('x', 300)) })
            {
                using var c = Client(address, k);
                await Send($"{name}: list", c, new HttpRequestMessage(HttpMethod.Get, "/api/audits"));
                await Send($"{name}: dashboard", c, new HttpRequestMessage(HttpMethod.Get, "/hangfire"));
            }
            using (var basic = Client(address, null))
            {
                basic.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Basic", Convert.ToBase64String(System.Text.Encoding.UTF8.GetBytes("team:" + key)));
                await Send("basic auth carrying the key", basic, new HttpRequestMessage(HttpMethod.Get, "/api/models"));
            }
            await Send("model: not ONNX", good, new HttpRequestMessage(HttpMethod.Post, "/api/models") { Content = ModelForm([1, 2, 3, 4], """{"width":32}""") });
            await Send("model: recipe not JSON", good, new HttpRequestMessage(HttpMethod.Post, "/api/models") { Content = ModelForm([1, 2], "{width:") });
            await Send("set: not a zip", good, new HttpRequestMessage(HttpMethod.Post, "/api/image-sets") { Content = SetForm([1, 2, 3]) });
            await Send("set: manifest naming missing files", good, new HttpRequestMessage(HttpMethod.Post, "/api/image-sets") { Content = SetForm(ManifestZip()) });
            await Send("folder: outside the root", good, Json("/api/image-sets/folder", new { path = "../../etc" }));
            await Send("folder: absolute", good, Json("/api/image-sets/folder", new { path = root }));
            await Send("folder: missing", good, Json("/api/image-sets/folder", new { path = "sets/nothing-here" }));
            await Send("audit: unknown ids", good, Json("/api/audits", new { modelId = Guid.NewGuid(), imageSetId = Guid.NewGuid() }));
            await Send("audit: missing", good, new HttpRequestMessage(HttpMethod.Get, $"/api/audits/{Guid.NewGuid()}/verdict"));
            await Send("audit list: bad filter", good, new HttpRequestMessage(HttpMethod.Get, "/api/audits?state=lost"));
            using (var browser = new HttpClient(new HttpClientHandler { AllowAutoRedirect = false, UseCookies = true, CookieContainer = new CookieContainer() }) { BaseAddress = address })
            {
                var token = BrowserSession.TokenIn(await browser.GetStringAsync("/ui/login"));
                await Send("login: wrong secret", browser, new HttpRequestMessage(HttpMethod.Post, "/ui/login")
                {
                    Content = new FormUrlEncodedContent([KeyValuePair.Create("__af", token), KeyValuePair.Create("key", wrongSecret)]),
                });
                await Send("login: good key", browser, new HttpRequestMessage(HttpMethod.Post, "/ui/login")
                {
                    Content = new FormUrlEncodedContent([KeyValuePair.Create("__af", token), KeyValuePair.Create("key", key)]),
                });
                await Send("page: missing audit", browser, new HttpRequestMessage(HttpMethod.Get, $"/ui/audits/{Guid.NewGuid()}"));
            }

            var failures = new List<string>();
            foreach (var (what, response, body) in answers)
            {
                if ((int)response.StatusCode >= 500) failures.Add($"{what}: {(int)response.StatusCode}\n{body}");
                var headers = string.Join("\n", response.Headers.Concat(response.Content.Headers).Select(h => $"{h.Key}: {string.Join(",", h.Value)}"));
                foreach (var s in secrets.Where(s => body.Contains(s, StringComparison.Ordinal) || headers.Contains(s, StringComparison.Ordinal)))
                    failures.Add($"{what}: the answer shows a secret ({Shown(s)})\n{body}");
                foreach (var p in ServerPaths(root).Where(p => body.Contains(p, StringComparison.Ordinal)))
                    failures.Add($"{what}: the answer shows the server path {p}\n{body}");
            }
            Assert.Contains(answers, a => a.What == "model: not ONNX" && a.Response.StatusCode == HttpStatusCode.BadRequest);
            foreach (var line in logs.Lines)
            {
                foreach (var s in secrets.Where(s => line.Contains(s, StringComparison.Ordinal)))
                    failures.Add($"log line shows a secret ({Shown(s)}): {line}");
            }
            Assert.True(logs.Lines.Count > 20, $"only {logs.Lines.Count} log lines captured");
            Assert.True(failures.Count == 0, string.Join("\n\n", failures));
        }
        finally
        {
            await app.StopAsync();
            try { Directory.Delete(root, recursive: true); } catch (IOException) { } catch (UnauthorizedAccessException) { }
        }
    }

    private static string Shown(string secret) => secret.Length > 12 ? secret[..8] + "…" : "…";

    /// <summary>The artifact root, the temporary folder and where the service's binaries live.</summary>
    private static IEnumerable<string> ServerPaths(string root) =>
        [root, Path.GetTempPath().TrimEnd('/') + "/", AppContext.BaseDirectory.TrimEnd('/'), Directory.GetCurrentDirectory()];

    private static async Task<(string Key, Data.Teams.ApiKeyInfo Info)> KeyAsync(TestDatabase db, string team, string name)
    {
        var t = await new Data.Teams.TeamStore(db.DataSource).EnsureAsync(team, CancellationToken.None);
        return await new Data.Teams.ApiKeyStore(db.DataSource).CreateAsync(t.Id, name, CancellationToken.None);
    }

    private static HttpClient Client(Uri address, string? key)
    {
        var c = new HttpClient(new HttpClientHandler { AllowAutoRedirect = false }) { BaseAddress = address };
        if (key is not null) c.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return c;
    }

    private static HttpRequestMessage Json(string path, object body) => new(HttpMethod.Post, path) { Content = JsonContent.Create(body) };

    private static MultipartFormDataContent ModelForm(byte[] bytes, string recipe) =>
        new() { { new StringContent(recipe), "recipe" }, { new ByteArrayContent(bytes), "model", "m.onnx" } };

    private static MultipartFormDataContent SetForm(byte[] zip) => new() { { new ByteArrayContent(zip), "archive", "set.zip" } };

    private static byte[] ManifestZip()
    {
        using var ms = new MemoryStream();
        using (var zip = new ZipArchive(ms, ZipArchiveMode.Create, leaveOpen: true))
        {
            using var w = new StreamWriter(zip.CreateEntry("manifest.csv").Open());
            w.Write("image,label,site\nimg/a.png,0,north\nimg/b.png,1,south\n");
        }
        return ms.ToArray();
    }
}
