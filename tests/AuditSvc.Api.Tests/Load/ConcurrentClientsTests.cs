using System.Collections.Concurrent;
using System.Diagnostics;
using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Api.Tests.Ui;
using Xunit.Abstractions;

namespace AuditSvc.Api.Tests.Load;

/// <summary>
/// Many clients at once against the service on loopback (the counting engine keeps the work itself trivial): they
/// submit audits, poll their progress and read lists, reports and pages. Bounded in clients, rounds and time.
/// Latency percentiles are printed, not asserted (the machine is shared); what is asserted is no 5xx, no broken
/// connection, and every accepted audit done with each of its items counted exactly once.
/// </summary>
public sealed class ConcurrentClientsTests(ITestOutputHelper output)
{
    private const int Teams = 5;
    private const int ClientsPerTeam = 10;
    private const int MaxRounds = 30;
    private static readonly TimeSpan LoadTime = TimeSpan.FromSeconds(20);

    private sealed record Sample(string Route, bool Read, int Status, double Ms);

    [PgFact]
    public async Task FiftyClients_SubmitPollAndRead_NoServerErrorsAndNoLostWork()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 4);
        Assert.True(IPAddress.IsLoopback(IPAddress.Parse(svc.Address.Host)), $"load goes to loopback only, not {svc.Address}");
        var clients = new List<(HttpClient Api, BrowserSession Pages, Guid Model, Guid Set)>();
        for (var t = 0; t < Teams; t++)
        {
            using var setup = await svc.ClientAsync($"load-team-{t}");
            var model = (await Uploads.ModelAsync(setup)).GetProperty("id").GetGuid();
            var set = (await Uploads.ImageSetAsync(setup, 3)).GetProperty("id").GetGuid();
            for (var c = 0; c < ClientsPerTeam; c++)
            {
                var (key, _) = await BrowserSession.KeyAsync(svc, $"load-team-{t}", $"client-{c}");
                var api = new HttpClient { BaseAddress = svc.Address };
                api.DefaultRequestHeaders.Authorization = new("Bearer", key);
                var pages = new BrowserSession(svc);
                (await pages.LoginAsync(key)).Dispose();
                clients.Add((api, pages, model, set));
            }
        }

        var samples = new ConcurrentBag<Sample>();
        var broken = new ConcurrentBag<string>();
        var accepted = new ConcurrentBag<(HttpClient Api, Guid Id)>();
        var refused = 0;
        using var stop = new CancellationTokenSource(LoadTime);
        var wall = Stopwatch.StartNew();

        async Task<HttpResponseMessage?> Timed(string route, bool read, Func<Task<HttpResponseMessage>> call)
        {
            var sw = Stopwatch.StartNew();
            try
            {
                var response = await call();
                await response.Content.LoadIntoBufferAsync();
                samples.Add(new Sample(route, read, (int)response.StatusCode, sw.Elapsed.TotalMilliseconds));
                return response;
            }
            catch (HttpRequestException e)
            {
                broken.Add($"{route}: {e.Message}");
                return null;
            }
        }

        async Task RunClient(HttpClient api, BrowserSession pages, Guid model, Guid set, int index)
        {
            Guid? mine = null;
            var notBefore = TimeSpan.Zero;
            for (var round = 0; round < MaxRounds && !stop.IsCancellationRequested; round++)
            {
                // One audit per client, staggered over the first rounds (the drain afterwards stays short).
                if (mine is null && round >= index % 10 && wall.Elapsed >= notBefore)
                {
                    using var submit = await Timed("POST /api/audits", false, () => Uploads.SubmitAsync(api, Json(model), Json(set), 2));
                    if (submit?.StatusCode == HttpStatusCode.Accepted)
                    {
                        mine = (await submit.Content.ReadFromJsonAsync<AuditSnapshot>())!.Id;
                        accepted.Add((api, mine.Value));
                    }
                    else if (submit?.StatusCode == HttpStatusCode.TooManyRequests)
                    {
                        Interlocked.Increment(ref refused);
                        notBefore = wall.Elapsed + (submit.Headers.RetryAfter?.Delta ?? TimeSpan.FromSeconds(1));
                    }
                }
                if (mine is { } id)
                {
                    (await Timed("GET /api/audits/{id}", true, () => api.GetAsync($"/api/audits/{id}")))?.Dispose();
                    (await Timed("GET /api/audits/{id}/verdict", true, () => api.GetAsync($"/api/audits/{id}/verdict")))?.Dispose();
                    (await Timed("GET /api/audits/{id}/report", true, () => api.GetAsync($"/api/audits/{id}/report")))?.Dispose();
                }
                (await Timed("GET /api/audits", true, () => api.GetAsync("/api/audits?limit=20")))?.Dispose();
                (await Timed("GET /ui/audits", true, () => pages.Client.GetAsync("/ui/audits")))?.Dispose();
                await Task.Delay(50);
            }
        }

        await Task.WhenAll(clients.Select((c, i) => Task.Run(() => RunClient(c.Api, c.Pages, c.Model, c.Set, i))));
        var loadSeconds = wall.Elapsed.TotalSeconds;

        // No lost work: every audit the service accepted ends done, with every item counted once.
        var lost = new List<string>();
        foreach (var (api, id) in accepted)
        {
            var end = await svc.WaitForEndAsync(api, id);
            var result = end.State == "done" ? await api.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/result") : default;
            if (end.State != "done" || result.GetProperty("countedOnce").GetInt32() != 6 || result.GetProperty("items").GetInt32() != 6)
                lost.Add($"{id}: {end.State} {end.Error} {(end.State == "done" ? result.ToString() : "")}");
        }

        Report(samples, loadSeconds, accepted.Count, refused);
        foreach (var c in clients) { c.Api.Dispose(); c.Pages.Dispose(); }
        Assert.Empty(broken);
        Assert.Empty(samples.Where(s => s.Status >= 500).Select(s => $"{s.Route}: {s.Status}"));
        Assert.Empty(lost);
        Assert.True(accepted.Count >= Teams, $"only {accepted.Count} audits accepted");
        Assert.True(samples.Count >= clients.Count * 5, $"only {samples.Count} requests made");
    }

    private void Report(ConcurrentBag<Sample> samples, double seconds, int accepted, int refused)
    {
        output.WriteLine($"{Teams * ClientsPerTeam} clients, {samples.Count} requests in {seconds:0.0} s ({samples.Count / seconds:0}/s); " +
                         $"{accepted} audits accepted, {refused} submissions refused with 429");
        output.WriteLine($"statuses: {string.Join(", ", samples.GroupBy(s => s.Status).OrderBy(g => g.Key).Select(g => $"{g.Key}×{g.Count()}"))}");
        Line("all reads", samples.Where(s => s.Read).ToList());
        foreach (var route in samples.GroupBy(s => s.Route).OrderBy(g => g.Key)) Line(route.Key, route.ToList());
    }

    private void Line(string what, List<Sample> s)
    {
        if (s.Count == 0) return;
        var ms = s.Select(x => x.Ms).Order().ToArray();
        double P(double q) => ms[Math.Min(ms.Length - 1, (int)Math.Ceiling(q * ms.Length) - 1)];
        output.WriteLine($"{what,-30} n={ms.Length,5}  p50={P(0.50),7:0.0} ms  p95={P(0.95),7:0.0} ms  p99={P(0.99),7:0.0} ms  max={ms[^1],7:0.0} ms");
    }

    private static JsonElement Json(Guid id) => JsonSerializer.SerializeToElement(new { id });
}
