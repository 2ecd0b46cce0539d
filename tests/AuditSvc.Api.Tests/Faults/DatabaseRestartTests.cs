using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Data.Teams;
using Microsoft.AspNetCore.Hosting;
using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;
using Npgsql;
using Xunit.Abstractions;

namespace AuditSvc.Api.Tests.Faults;

/// <summary>
/// PostgreSQL stopped and started again in the middle of an audit (a cluster of the test's own): while it is down
/// the service answers 503, never 500; after it is back the first requests do not fail with 500, the workers pick
/// the audit up by themselves, it completes with every item counted once, and an answer that was not 2xx created
/// nothing (so a client that retries makes no duplicate).
/// </summary>
public sealed class DatabaseRestartTests(ITestOutputHelper output)
{
    [PgFact]
    public async Task Audit_PostgresRestartedMidway_ServiceAnswers503ThenRecoversAndCompletesEveryItemOnce()
    {
        await using var pg = await PrivateCluster.StartAsync();
        var root = Directory.CreateTempSubdirectory("auditsvc-restart-").FullName;
        await using var app = ServiceHost.BuildApi([], b =>
        {
            b.Configuration.AddInMemoryCollection(new Dictionary<string, string?>
            {
                ["AUDITSVC_DB"] = pg.ConnectionString,
                ["AUDITSVC_DATA"] = root,
                ["AUDITSVC_WORKERS"] = "2",
                ["AUDITSVC_LEASE_SECONDS"] = "5",
                ["AUDITSVC_RECONCILE_SECONDS"] = "1",
            });
            b.WebHost.UseUrls("http://127.0.0.1:0");
            b.Logging.SetMinimumLevel(LogLevel.Critical);
            b.Services.AddSingleton<IAuditEngine>(new CountingEngine(chunkTime: TimeSpan.FromMilliseconds(400)));
        });
        await app.StartAsync();
        try
        {
            var address = ServiceUnderTest.AddressOf(app);
            string key;
            await using (var db = NpgsqlDataSource.Create(pg.ConnectionString))
            {
                var team = await new TeamStore(db).EnsureAsync("team-a", CancellationToken.None);
                (key, _) = await new ApiKeyStore(db).CreateAsync(team.Id, "restart", CancellationToken.None);
            }
            using var client = new HttpClient { BaseAddress = address };
            client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
            var model = await Uploads.ModelAsync(client);
            var set = await Uploads.ImageSetAsync(client, 10);
            var id = (await (await Uploads.SubmitAsync(client, model, set, 2)).Content.ReadFromJsonAsync<AuditSnapshot>())!.Id;
            await ServiceUnderTest.PollAsync(async () => (await client.GetFromJsonAsync<AuditSnapshot>($"/api/audits/{id}"))!,
                a => a.Progress.ChunksDone >= 1, "the first chunk");

            await pg.StopAsync();
            var down = new List<(string What, int Status, string? RetryAfter)>();
            foreach (var (what, call) in Calls(client, model, set, id))
            {
                using var r = await call();
                down.Add((what, (int)r.StatusCode, r.Headers.RetryAfter?.ToString()));
            }
            await pg.StartAgainAsync();
            var after = new List<(string What, int Status)>();
            var accepted = 1;
            foreach (var (what, call) in Calls(client, model, set, id).Concat(Calls(client, model, set, id)))
            {
                using var r = await call();
                after.Add((what, (int)r.StatusCode));
                if (what.StartsWith("POST", StringComparison.Ordinal) && r.StatusCode == HttpStatusCode.Accepted) accepted++;
            }
            // Again, with no request while it is down: the pool still holds connections the restart broke.
            await pg.StopAsync();
            await pg.StartAgainAsync();
            foreach (var (what, call) in Calls(client, model, set, id))
            {
                using var r = await call();
                after.Add(("restart 2: " + what, (int)r.StatusCode));
                if (what.StartsWith("POST", StringComparison.Ordinal) && r.StatusCode == HttpStatusCode.Accepted) accepted++;
            }
            output.WriteLine("database down:    " + string.Join(", ", down.Select(d => $"{d.What} {d.Status} (Retry-After {d.RetryAfter})")));
            output.WriteLine("first after back: " + string.Join(", ", after.Select(d => $"{d.What} {d.Status}")));

            Assert.All(down, d => Assert.True(d.Status == 503 && d.RetryAfter is not null, $"{d.What} with the database down: {d.Status}, retry after {d.RetryAfter}"));
            Assert.All(after, d => Assert.True(d.Status < 500, $"{d.What} after the restart: {d.Status}"));
            var end = await ServiceUnderTest.PollAsync(async () => (await client.GetFromJsonAsync<AuditSnapshot>($"/api/audits/{id}"))!,
                a => a.State is "done" or "failed" or "cancelled", "the audit to end after the restart");
            Assert.Equal(("done", "pass", 20), (end.State, end.Verdict, end.Progress.ItemsDone));
            var result = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/result");
            Assert.Equal((20, 20), (result.GetProperty("items").GetInt32(), result.GetProperty("countedOnce").GetInt32()));
            // Every audit the service holds was answered 202: a refused submission left nothing behind to duplicate.
            var all = await client.GetFromJsonAsync<JsonElement>("/api/audits");
            Assert.Equal(accepted, all.GetArrayLength());
            foreach (var a in all.EnumerateArray().Select(a => a.GetProperty("id").GetGuid()))
                Assert.Equal("done", (await ServiceUnderTest.PollAsync(async () => (await client.GetFromJsonAsync<AuditSnapshot>($"/api/audits/{a}"))!,
                    s => s.State is "done" or "failed" or "cancelled", $"audit {a} to end")).State);
        }
        finally
        {
            await app.StopAsync();
            try { Directory.Delete(root, recursive: true); } catch (IOException) { } catch (UnauthorizedAccessException) { }
        }
    }

    private static IEnumerable<(string What, Func<Task<HttpResponseMessage>> Call)> Calls(HttpClient client, JsonElement model, JsonElement set, Guid id) =>
    [
        ("GET /health", () => client.GetAsync("/health")),
        ("GET /api/audits/{id}", () => client.GetAsync($"/api/audits/{id}")),
        ("GET /api/audits", () => client.GetAsync("/api/audits")),
        ("POST /api/audits", () => Uploads.SubmitAsync(client, model, set, 5)),
        ("GET /api/models", () => client.GetAsync("/api/models")),
    ];
}
