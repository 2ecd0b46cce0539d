using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Audits;
using AuditSvc.Core;
using Microsoft.Extensions.Configuration;

namespace AuditSvc.Api.Tests.Hosting;

public sealed class ServiceHostTests
{
    [PgFact]
    public async Task OpenApi_Document_ListsEveryRoute()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var anonymous = new HttpClient { BaseAddress = svc.Address };

        var doc = await anonymous.GetFromJsonAsync<JsonElement>("/openapi/v1.json");

        var paths = doc.GetProperty("paths").EnumerateObject().Select(p => p.Name).ToHashSet();
        foreach (var route in new[] { "/api/models", "/api/models/{id}", "/api/image-sets", "/api/image-sets/folder", "/api/image-sets/{id}",
                     "/api/audits", "/api/audits/{id}", "/api/audits/{id}/result", "/api/audits/{id}/verdict", "/api/audits/{id}/cancel",
                     "/api/audits/{id}/findings", "/api/audits/{id}/reviews", "/api/audits/{id}/report" })
            Assert.Contains(route, paths);
    }

    [PgFact]
    public async Task Api_NoKeyOrWrongKey_Returns401Problem()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var anonymous = new HttpClient { BaseAddress = svc.Address };
        using var wrong = new HttpClient { BaseAddress = svc.Address };
        wrong.DefaultRequestHeaders.Authorization = new("Bearer", "ask_000000000000_nope");

        foreach (var client in new[] { anonymous, wrong })
        {
            var response = await client.GetAsync("/api/audits");
            Assert.Equal(HttpStatusCode.Unauthorized, response.StatusCode);
            Assert.Equal("application/problem+json", response.Content.Headers.ContentType!.MediaType);
        }
    }

    [PgFact]
    public async Task Dashboard_KeyOfOrdinaryTeam_IsRefused()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        using var operatorClient = await svc.ClientAsync("operators");

        Assert.Equal(HttpStatusCode.Forbidden, (await client.GetAsync("/hangfire")).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await operatorClient.GetAsync("/hangfire")).StatusCode);
    }

    [PgFact]
    public async Task ModelUpload_SameBytesTwice_StoredOnce()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        byte[] bytes = [9, 8, 7, 6];

        var first = await Uploads.ModelAsync(client, bytes);
        var second = await Uploads.ModelAsync(client, bytes, recipe: """{"width":64,"height":64}""");

        Assert.Equal(first.GetProperty("contentHash").GetString(), second.GetProperty("contentHash").GetString());
        Assert.Equal(64, second.GetProperty("recipe").GetProperty("width").GetInt32());
        Assert.Single(Directory.GetFiles(Path.Combine(svc.DataRoot, "blobs"), "*.onnx", SearchOption.AllDirectories));
    }

    [PgFact]
    public async Task ModelUpload_RecipeNotJson_Returns400NamingRecipe()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        using var form = new MultipartFormDataContent { { new StringContent("{width:"), "recipe" }, { new ByteArrayContent([1]), "model", "m.onnx" } };

        await AuditEndpointsTests.AssertFieldProblemAsync(await client.PostAsync("/api/models", form), "recipe");
    }

    [PgFact]
    public async Task ImageSetUpload_NotAZip_Returns400NamingArchive()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");

        await AuditEndpointsTests.AssertFieldProblemAsync(await Uploads.PostZipAsync(client, [1, 2, 3]), "archive");
    }

    [PgFact]
    public async Task RegisterFolder_OutsideArtifactRoot_Returns400NamingPath()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");

        var response = await client.PostAsJsonAsync("/api/image-sets/folder", new { path = "../../etc" });

        await AuditEndpointsTests.AssertFieldProblemAsync(response, "path");
    }

    [PgFact]
    public async Task RegisterFolder_UnderRoot_ReadsItsItems()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var folder = Path.Combine(svc.DataRoot, "incoming", "team-a", "set1");
        foreach (var label in new[] { "ok", "defect" })
        {
            Directory.CreateDirectory(Path.Combine(folder, label));
            for (var i = 0; i < 3; i++) await File.WriteAllTextAsync(Path.Combine(folder, label, $"{i}.png"), $"{label}{i}");
        }

        var response = await client.PostAsJsonAsync("/api/image-sets/folder", new { path = "incoming/team-a/set1", name = "line 4" });

        Assert.Equal(HttpStatusCode.Created, response.StatusCode);
        var set = await response.Content.ReadFromJsonAsync<JsonElement>();
        Assert.Equal(6, set.GetProperty("itemCount").GetInt32());
        Assert.StartsWith("sha256:", set.GetProperty("contentHash").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public void BuildApi_NoConnectionString_FailsNamingTheSetting()
    {
        var e = Assert.Throws<AuditInputException>(() => ServiceHost.BuildApi([], b =>
            b.Configuration.AddInMemoryCollection(new Dictionary<string, string?> { ["AUDITSVC_DATA"] = "/tmp/x", ["AUDITSVC_DB"] = "" })));

        Assert.Contains("AUDITSVC_DB", e.Message, StringComparison.Ordinal);
    }
}
