using System.Net;
using AuditSvc.Api.Tests.Ui;
using AuditSvc.Data.Tests;

namespace AuditSvc.Api.Tests.Hosting;

/// <summary>Per-key rate limits on /api and /ui (429 with Retry-After) and the upload size limit (413), with small limits set for the test.</summary>
public class LimitsTests
{
    [PgFact]
    public async Task Reads_PastTheKeysBurst_Get429WithRetryAfterAndOtherKeysAreServed()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0,
            settings: new Dictionary<string, string?> { ["AUDITSVC_RATE_PER_SECOND"] = "1", ["AUDITSVC_RATE_BURST"] = "5" });
        using var busy = await svc.ClientAsync("team-a");
        using var quiet = await svc.ClientAsync("team-b");

        var codes = new List<HttpResponseMessage>();
        for (int i = 0; i < 12; i++) codes.Add(await busy.GetAsync("/api/models"));

        var limited = codes.Where(r => r.StatusCode == HttpStatusCode.TooManyRequests).ToList();
        Assert.NotEmpty(limited);
        Assert.InRange(codes.Count(r => r.StatusCode == HttpStatusCode.OK), 5, 7);
        Assert.All(limited, r => Assert.True(r.Headers.RetryAfter?.Delta is { TotalSeconds: >= 1 }, "Retry-After missing"));
        Assert.Equal("application/problem+json", limited[0].Content.Headers.ContentType!.MediaType);
        Assert.Equal(HttpStatusCode.OK, (await quiet.GetAsync("/api/models")).StatusCode);
    }

    [PgFact]
    public async Task Pages_PastTheSessionsBurst_Get429WithRetryAfterAndOtherSessionsAreServed()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0,
            settings: new Dictionary<string, string?> { ["AUDITSVC_RATE_PER_SECOND"] = "1", ["AUDITSVC_RATE_BURST"] = "5" });
        var (busyKey, _) = await BrowserSession.KeyAsync(svc, "team-a", "busy");
        var (quietKey, _) = await BrowserSession.KeyAsync(svc, "team-a", "quiet");
        using var busy = new BrowserSession(svc);
        using var quiet = new BrowserSession(svc);
        (await busy.LoginAsync(busyKey)).Dispose();
        (await quiet.LoginAsync(quietKey)).Dispose();

        var responses = new List<HttpResponseMessage>();
        for (int i = 0; i < 12; i++) responses.Add(await busy.Client.GetAsync("/ui/audits"));

        var limited = responses.Where(r => r.StatusCode == HttpStatusCode.TooManyRequests).ToList();
        Assert.NotEmpty(limited);
        Assert.InRange(responses.Count(r => r.StatusCode == HttpStatusCode.OK), 5, 7);
        Assert.All(limited, r => Assert.True(r.Headers.RetryAfter?.Delta is { TotalSeconds: >= 1 }, "Retry-After missing"));
        Assert.Equal("text/html", limited[0].Content.Headers.ContentType!.MediaType);
        Assert.Contains("Too many requests", await limited[0].Content.ReadAsStringAsync(), StringComparison.Ordinal);
        // Another session is served; so is the same key on /api, whose budget is its own.
        Assert.Equal(HttpStatusCode.OK, (await quiet.Client.GetAsync("/ui/audits")).StatusCode);
        using var api = new HttpClient { BaseAddress = svc.Address };
        api.DefaultRequestHeaders.Authorization = new("Bearer", busyKey);
        Assert.Equal(HttpStatusCode.OK, (await api.GetAsync("/api/models")).StatusCode);
        foreach (var r in responses) r.Dispose();
    }

    [PgFact]
    public async Task SignInPage_PastTheAddressesBurst_Gets429()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0,
            settings: new Dictionary<string, string?> { ["AUDITSVC_RATE_PER_SECOND"] = "1", ["AUDITSVC_RATE_BURST"] = "5" });
        using var anonymous = new HttpClient { BaseAddress = svc.Address };

        var statuses = new List<HttpStatusCode>();
        for (int i = 0; i < 12; i++) statuses.Add((await anonymous.GetAsync("/ui/login")).StatusCode);

        Assert.Contains(HttpStatusCode.TooManyRequests, statuses);
        Assert.InRange(statuses.Count(s => s == HttpStatusCode.OK), 5, 7);
    }

    [PgFact]
    public async Task Uploads_PastTheKeysWriteRate_Get429()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0,
            settings: new Dictionary<string, string?> { ["AUDITSVC_WRITES_PER_MINUTE"] = "4" });
        using var client = await svc.ClientAsync("team-a");
        var statuses = new List<HttpStatusCode>();
        for (int i = 0; i < 4; i++) statuses.Add((await Uploads.PostZipAsync(client, Uploads.Zip(2, "cat", "dog"))).StatusCode);
        Assert.Equal(HttpStatusCode.Created, statuses[0]);
        Assert.Contains(HttpStatusCode.TooManyRequests, statuses);
        // Reads have their own bucket: still served.
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/api/image-sets")).StatusCode);
    }

    [PgFact]
    public async Task Upload_PastTheSizeLimit_Is413AndLeavesNothing()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0,
            settings: new Dictionary<string, string?> { ["AUDITSVC_MAX_UPLOAD_BYTES"] = "300000" });
        using var client = await svc.ClientAsync("team-a");
        var big = new byte[400_000];
        new Random(3).NextBytes(big);

        var response = await Uploads.PostZipAsync(client, big);

        Assert.Equal(HttpStatusCode.RequestEntityTooLarge, response.StatusCode);
        var blobs = Path.Combine(svc.DataRoot, "blobs");
        Assert.True(!Directory.Exists(blobs) || Directory.GetFiles(blobs, "*", SearchOption.AllDirectories).Length == 0);
        var scratch = Path.Combine(svc.DataRoot, "scratch");
        Assert.True(!Directory.Exists(scratch) || Directory.GetFiles(scratch).Length == 0);
    }
}
