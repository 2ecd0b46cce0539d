using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Data.Tests;

namespace AuditSvc.Api.Tests.Audits;

/// <summary>A submitted policy is checked (types, duplicate keys, and names against the set's columns when it has any) before anything is queued.</summary>
public class PolicyCheckTests
{
    [PgTheory]
    [InlineData("""{ "allowed_attributes": [["site"]] }""", "allowed_attributes")]
    [InlineData("""{ "leakage_threshold": 0.2, "leakage_threshold": 0.9 }""", "leakage_threshold")]
    [InlineData("""{ "min_auroc": "high" }""", "min_auroc")]
    public async Task Submit_BadPolicy_Is400NamingPolicy(string policy, string expected)
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var model = await Uploads.ModelAsync(client);
        var set = await Uploads.ImageSetAsync(client);
        var body = $$"""{ "modelId": "{{model.GetProperty("id").GetGuid()}}", "imageSetId": "{{set.GetProperty("id").GetGuid()}}", "policy": {{policy}} }""";

        var response = await client.PostAsync("/api/audits", new StringContent(body, System.Text.Encoding.UTF8, "application/json"));

        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var problem = await response.Content.ReadAsStringAsync();
        Assert.Contains("\"policy\"", problem, StringComparison.Ordinal);
        Assert.Contains(expected, problem, StringComparison.Ordinal);
        Assert.Empty(await client.GetFromJsonAsync<JsonElement[]>("/api/audits") ?? []);
    }
}
