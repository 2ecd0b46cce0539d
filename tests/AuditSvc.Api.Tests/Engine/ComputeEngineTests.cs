using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Cli.Demo;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.Models;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;

namespace AuditSvc.Api.Tests.Engine;

public sealed class ComputeEngineTests
{
    private const int Images = 600;
    private const double Agreement = 0.85; // the demo's own setting
    private const int Seed = 20261202;

    [PgFact]
    public async Task Demo_ThroughTheServiceInChunks_SameVerdictFindingsAndReasonsAsInProcessAudit()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1, realEngine: true);
        using var client = await svc.ClientAsync("team-a");
        var setDir = Path.Combine(svc.DataRoot, "incoming", "team-a", "fruit");
        var manifest = DemoSetGenerator.Write(setDir, new DemoSetOptions(Images, Agreement, Seed));
        var model = Path.Combine(RepoRoot(), "seed-demo", "models", "fruit-cue.onnx");
        var local = AuditPipeline.Run(new AuditRequest(model, manifest, new ModelLoadOptions(),
            new AuditPolicy { AllowedAttributes = ["defect_area"] }, new PassOptions(), Path.Combine(svc.DataRoot, "local-work"))).Result;

        var modelId = await UploadModelAsync(client, model);
        var set = await client.PostAsJsonAsync("/api/image-sets/folder", new { path = "incoming/team-a/fruit", name = "demo", modelId });
        Assert.Equal(HttpStatusCode.Created, set.StatusCode);
        var setId = (await set.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("id").GetGuid();
        var submit = await client.PostAsJsonAsync("/api/audits", new { modelId, imageSetId = setId, chunkSize = 200, policy = new { allowed_attributes = new[] { "defect_area" } } });
        Assert.Equal(HttpStatusCode.Accepted, submit.StatusCode);
        var id = (await submit.Content.ReadFromJsonAsync<AuditSnapshot>())!.Id;
        var end = await svc.WaitForEndAsync(client, id);

        Assert.Equal(("done", local.Verdict, 3), (end.State, end.Verdict, end.Progress.ChunksDone));
        var served = AuditJson.Deserialize(await client.GetStringAsync($"/api/audits/{id}/result"));
        Assert.Equal(local.Attributes.Select(a => (a.Name, a.Leakage, a.Verdict)), served.Attributes.Select(a => (a.Name, a.Leakage, a.Verdict)));
        Assert.Equal(local.Findings.Select(f => (f.Layer, f.Unit, f.Attribute, f.Value, f.QValue)), served.Findings.Select(f => (f.Layer, f.Unit, f.Attribute, f.Value, f.QValue)));
        Assert.Equal(local.Reasons.Select(r => r.Message), served.Reasons.Select(r => r.Message));
        var report = await client.GetAsync($"/api/audits/{id}/report");
        Assert.Equal("text/html", report.Content.Headers.ContentType!.MediaType);
        Assert.Contains("<html", await report.Content.ReadAsStringAsync(), StringComparison.OrdinalIgnoreCase);
    }

    private static async Task<Guid> UploadModelAsync(HttpClient client, string model)
    {
        using var form = new MultipartFormDataContent();
        form.Add(new StringContent(await File.ReadAllTextAsync(Path.ChangeExtension(model, ".recipe.json"))), "recipe");
        var file = new ByteArrayContent(await File.ReadAllBytesAsync(model));
        file.Headers.ContentType = new MediaTypeHeaderValue("application/octet-stream");
        form.Add(file, "model", Path.GetFileName(model));
        var response = await client.PostAsync("/api/models", form);
        Assert.Equal(HttpStatusCode.Created, response.StatusCode);
        var body = await response.Content.ReadFromJsonAsync<JsonElement>();
        // The recipe comes back in the words it was sent in, not re-spelt in the API's casing.
        var sent = JsonDocument.Parse(await File.ReadAllTextAsync(Path.ChangeExtension(model, ".recipe.json"))).RootElement;
        var echoed = body.GetProperty("recipe");
        foreach (var field in sent.EnumerateObject())
            Assert.Equal(field.Value.GetRawText().Replace(" ", "", StringComparison.Ordinal).Replace("\n", "", StringComparison.Ordinal),
                echoed.GetProperty(field.Name).GetRawText());
        return body.GetProperty("id").GetGuid();
    }

    private static string RepoRoot()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
            if (File.Exists(Path.Combine(dir.FullName, "AuditSvc.sln"))) return dir.FullName;
        throw new DirectoryNotFoundException("AuditSvc.sln not found above " + AppContext.BaseDirectory);
    }
}
