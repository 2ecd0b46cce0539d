using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;

namespace AuditSvc.Api.Tests.Audits;

public sealed class AuditEndpointsTests
{
    [PgFact]
    public async Task Flow_UploadModelAndZipThenSubmit_EndsWithVerdictAndResult()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 2);
        using var client = await svc.ClientAsync("vision-qa");
        var model = await Uploads.ModelAsync(client);
        var set = await Uploads.ImageSetAsync(client, perClass: 10);
        Assert.Equal(20, set.GetProperty("itemCount").GetInt32());

        var submit = await Uploads.SubmitAsync(client, model, set, chunkSize: 3);
        Assert.Equal(HttpStatusCode.Accepted, submit.StatusCode);
        var id = (await submit.Content.ReadFromJsonAsync<AuditSnapshot>())!.Id;
        Assert.Equal($"/api/audits/{id}", submit.Headers.Location!.OriginalString);

        var end = await svc.WaitForEndAsync(client, id);
        Assert.Equal(("done", "pass"), (end.State, end.Verdict));
        Assert.Equal((20, 20, 7, 7), (end.Progress.ItemsDone, end.Progress.ItemsTotal, end.Progress.ChunksDone, end.Progress.ChunksTotal));
        var result = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/result");
        Assert.Equal(20, result.GetProperty("countedOnce").GetInt32());
        var verdict = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/verdict");
        Assert.Equal("pass", verdict.GetProperty("verdict").GetString());
        Assert.Equal("stamp", verdict.GetProperty("attributes")[0].GetProperty("attribute").GetString());
        var passed = await client.GetFromJsonAsync<JsonElement>($"/api/audits?verdict=pass&modelId={model.GetProperty("id")}");
        Assert.Equal(id, passed[0].GetProperty("id").GetGuid());
        Assert.Equal(0, (await client.GetFromJsonAsync<JsonElement>("/api/audits?verdict=block")).GetArrayLength());
        Assert.Equal(HttpStatusCode.Conflict, (await client.PostAsync($"/api/audits/{id}/cancel", null)).StatusCode);
    }

    [PgFact]
    public async Task Result_ServedText_IsByteForByteWhatTheEngineWrote()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1);
        using var client = await svc.ClientAsync("vision-qa");
        var id = await SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 10);
        await svc.WaitForEndAsync(client, id);

        var text = await client.GetStringAsync($"/api/audits/{id}/result");

        Assert.Equal("""{"verdict":"pass","items":4,"countedOnce":4,"processes":[""" + Environment.ProcessId + "]}", text);
    }

    [PgFact]
    public async Task Audit_AnotherTeamsKey_AnswersNotFoundEverywhere()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var owner = await svc.ClientAsync("team-a");
        using var other = await svc.ClientAsync("team-b");
        var id = await SubmitAsync(owner, await Uploads.ModelAsync(owner), await Uploads.ImageSetAsync(owner, 2), 2);

        Assert.Equal(HttpStatusCode.NotFound, (await other.GetAsync($"/api/audits/{id}")).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await other.GetAsync($"/api/audits/{id}/result")).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await other.GetAsync($"/api/audits/{id}/verdict")).StatusCode);
        Assert.Equal(HttpStatusCode.NotFound, (await other.PostAsync($"/api/audits/{id}/cancel", null)).StatusCode);
        Assert.Equal(0, (await other.GetFromJsonAsync<JsonElement>("/api/audits")).GetArrayLength());
        Assert.Equal("queued", (await owner.GetFromJsonAsync<AuditSnapshot>($"/api/audits/{id}"))!.State);
    }

    [PgFact]
    public async Task Submit_ModelOfAnotherTeam_Returns400NamingModelId()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var owner = await svc.ClientAsync("team-a");
        using var other = await svc.ClientAsync("team-b");
        var model = await Uploads.ModelAsync(owner);
        var set = await Uploads.ImageSetAsync(other, 2);

        var response = await Uploads.SubmitAsync(other, model, set, 2);

        await AssertFieldProblemAsync(response, "modelId");
    }

    [PgFact]
    public async Task Submit_NoImageSetId_Returns400NamingImageSetId()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var model = await Uploads.ModelAsync(client);

        var response = await client.PostAsJsonAsync("/api/audits", new { modelId = model.GetProperty("id").GetGuid() });

        await AssertFieldProblemAsync(response, "imageSetId");
    }

    [PgFact]
    public async Task Verdict_AuditNotDone_Returns409WithState()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var response = await client.GetAsync($"/api/audits/{id}/verdict");

        Assert.Equal(HttpStatusCode.Conflict, response.StatusCode);
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType!.MediaType);
        Assert.Equal("queued", (await response.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("state").GetString());
    }

    [PgFact]
    public async Task Cancel_QueuedAuditTwice_BothAnswerCancelled()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var first = await client.PostAsync($"/api/audits/{id}/cancel", null);
        var second = await client.PostAsync($"/api/audits/{id}/cancel", null);

        Assert.Equal("cancelled", (await first.Content.ReadFromJsonAsync<AuditSnapshot>())!.State);
        Assert.Equal("cancelled", (await second.Content.ReadFromJsonAsync<AuditSnapshot>())!.State);
    }

    [PgFact]
    public async Task Cancel_DuringMerge_StopsTheAnalysisAndFreesTheWorker()
    {
        var engine = new CountingEngine { FinishTime = TimeSpan.FromMinutes(10) };
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1, engine: engine);
        using var client = await svc.ClientAsync("team-a");
        var model = await Uploads.ModelAsync(client);
        var set = await Uploads.ImageSetAsync(client, 2);
        var id = await SubmitAsync(client, model, set, 2);
        await engine.FinishStarted.Task.WaitAsync(TimeSpan.FromMinutes(2)); // guards against a hang; not a timing check

        var cancelled = await client.PostAsync($"/api/audits/{id}/cancel", null);

        Assert.Equal("cancelled", (await cancelled.Content.ReadFromJsonAsync<AuditSnapshot>())!.State);
        // The ten-minute analysis stops (the guard only keeps a regression from hanging the run) ...
        await engine.FinishCancelled.Task.WaitAsync(TimeSpan.FromMinutes(2));
        // ... and the only worker is free for the next audit, which finishes.
        engine.FinishTime = TimeSpan.Zero;
        var next = await SubmitAsync(client, model, set, 2);
        Assert.Equal("done", (await svc.WaitForEndAsync(client, next)).State);
        Assert.Equal("cancelled", (await client.GetFromJsonAsync<AuditSnapshot>($"/api/audits/{id}"))!.State);
    }

    [PgFact]
    public async Task List_UnknownVerdictFilter_Returns400NamingVerdict()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");

        await AssertFieldProblemAsync(await client.GetAsync("/api/audits?verdict=maybe"), "verdict");
    }

    internal static async Task<Guid> SubmitAsync(HttpClient client, JsonElement model, JsonElement set, int chunkSize)
    {
        var response = await Uploads.SubmitAsync(client, model, set, chunkSize);
        Assert.Equal(HttpStatusCode.Accepted, response.StatusCode);
        return (await response.Content.ReadFromJsonAsync<AuditSnapshot>())!.Id;
    }

    internal static async Task AssertFieldProblemAsync(HttpResponseMessage response, string field)
    {
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType!.MediaType);
        var problem = await response.Content.ReadFromJsonAsync<JsonElement>();
        Assert.True(problem.GetProperty("errors").TryGetProperty(field, out _), problem.ToString());
    }
}
