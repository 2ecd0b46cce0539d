using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Audits;
using AuditSvc.Api.Tests.Hosting;

namespace AuditSvc.Api.Tests.Jobs;

public sealed class AuditJobsTests
{
    [PgFact]
    public async Task Audit_TwoWorkerProcesses_ShareTheChunksAndCountEachItemOnce()
    {
        // The API host runs one worker in this process; a child process runs the other. Each holds its first
        // chunk until the other process has started one, so the audit is provably shared.
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 12), 4);
        await svc.StartWorkerAsync(new CountingEngine(svc.Markers, waitForPeers: 2));
        var child = svc.StartWorkerProcess(peers: 2);

        var end = await svc.WaitForEndAsync(client, id);

        Assert.Equal(("done", 24), (end.State, end.Progress.ItemsDone));
        var result = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/result");
        Assert.Equal(24, result.GetProperty("countedOnce").GetInt32());
        Assert.Equal(24, result.GetProperty("items").GetInt32());
        var processes = result.GetProperty("processes").EnumerateArray().Select(p => p.GetInt32()).ToHashSet();
        Assert.Equal(new HashSet<int> { Environment.ProcessId, child.Id }, processes);
    }

    [PgFact]
    public async Task Audit_WorkerKilledMidChunk_CompletesWithEveryItemCountedOnce()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 5), 3);
        await File.WriteAllTextAsync(Path.Combine(svc.Markers, "hang"), "");
        var doomed = svc.StartWorkerProcess();
        // Wait until the child has claimed a chunk and is inside it, then kill it without any chance to clean up.
        await ServiceUnderTest.PollAsync(() => Task.FromResult(Directory.GetFiles(svc.Markers, $"{doomed.Id}-*.started").Length),
            n => n > 0, "the child worker to start a chunk");
        doomed.Kill(entireProcessTree: true);
        await doomed.WaitForExitAsync();
        File.Delete(Path.Combine(svc.Markers, "hang"));

        await svc.StartWorkerAsync(new CountingEngine(), workers: 2);
        var end = await svc.WaitForEndAsync(client, id);

        Assert.Equal(("done", "pass", 10), (end.State, end.Verdict, end.Progress.ItemsDone));
        var result = await client.GetFromJsonAsync<JsonElement>($"/api/audits/{id}/result");
        Assert.Equal(10, result.GetProperty("countedOnce").GetInt32());
        Assert.Equal(10, result.GetProperty("items").GetInt32());
        await using var conn = await svc.Db.DataSource.OpenConnectionAsync();
        await using var cmd = new Npgsql.NpgsqlCommand("SELECT count(*) FROM audit_chunks WHERE audit_id = $1 AND attempt > 1", conn);
        cmd.Parameters.Add(new Npgsql.NpgsqlParameter { Value = id });
        Assert.Equal(1L, await cmd.ExecuteScalarAsync()); // the chunk the dead worker held, taken again after its lease ran out
    }

    [PgFact]
    public async Task Audit_SmallAuditOfAnotherTeamSubmittedLater_FinishesFirstAndBothCountEveryItemOnce()
    {
        // One worker. Team A's audit has 20 chunks and is under way when team B submits one of 2 chunks: B is served
        // in turn with A (each team's window), so B ends long before A instead of waiting behind A's every chunk.
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1, engine: new CountingEngine(chunkTime: TimeSpan.FromMilliseconds(250)));
        using var a = await svc.ClientAsync("team-a");
        using var b = await svc.ClientAsync("team-b");
        var setB = await Uploads.ImageSetAsync(b, 2);
        var modelB = await Uploads.ModelAsync(b);
        var idA = await AuditEndpointsTests.SubmitAsync(a, await Uploads.ModelAsync(a), await Uploads.ImageSetAsync(a, 20), 2);
        await ServiceUnderTest.PollAsync(async () => (await a.GetFromJsonAsync<AuditSnapshot>($"/api/audits/{idA}"))!,
            s => s.Progress.ChunksDone >= 1, "team A's audit to be under way");
        var idB = await AuditEndpointsTests.SubmitAsync(b, modelB, setB, 2);

        var endB = await svc.WaitForEndAsync(b, idB);
        var atB = (await a.GetFromJsonAsync<AuditSnapshot>($"/api/audits/{idA}"))!;
        var endA = await svc.WaitForEndAsync(a, idA);

        Assert.Equal(("done", 4), (endB.State, endB.Progress.ItemsDone));
        Assert.Equal(("done", 40), (endA.State, endA.Progress.ItemsDone));
        Assert.True(atB.Progress.ChunksDone < 20, $"team B's audit ended after {atB.Progress.ChunksDone} of team A's 20 chunks");
        // Each result is what the audit gives alone: every item counted once, by this process.
        Assert.Equal("""{"verdict":"pass","items":4,"countedOnce":4,"processes":[""" + Environment.ProcessId + "]}", await b.GetStringAsync($"/api/audits/{idB}/result"));
        Assert.Equal("""{"verdict":"pass","items":40,"countedOnce":40,"processes":[""" + Environment.ProcessId + "]}", await a.GetStringAsync($"/api/audits/{idA}/result"));
        await using var conn = await svc.Db.DataSource.OpenConnectionAsync();
        await using var cmd = new Npgsql.NpgsqlCommand("SELECT (SELECT finished_at FROM audits WHERE id = $1) < (SELECT finished_at FROM audits WHERE id = $2)", conn);
        cmd.Parameters.Add(new Npgsql.NpgsqlParameter { Value = idB });
        cmd.Parameters.Add(new Npgsql.NpgsqlParameter { Value = idA });
        Assert.Equal(true, await cmd.ExecuteScalarAsync());
    }

    [PgFact]
    public async Task Audit_HandedOverChunksLostFromTheQueue_ReconcilerRevivesItAndCountsEachItemOnce()
    {
        // The audit is running, two chunks are marked as handed to the queue, but the queue has lost every job (as when
        // a process dies between the database and the queue): nothing is in flight that will ever run.
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 5), 2);
        await using (var conn = await svc.Db.DataSource.OpenConnectionAsync())
        await using (var drop = new Npgsql.NpgsqlCommand("DELETE FROM hangfire.jobqueue", conn))
            await drop.ExecuteNonQueryAsync();
        var chunks = new AuditSvc.Data.Audits.ChunkStore(svc.Db.DataSource);
        await chunks.StartAsync(id, CancellationToken.None);
        Assert.Equal(2, (await chunks.DispatchAsync(2, CancellationToken.None)).Count);

        await svc.StartWorkerAsync(new CountingEngine());
        var end = await svc.WaitForEndAsync(client, id);

        Assert.Equal(("done", 10), (end.State, end.Progress.ItemsDone));
        Assert.Equal("""{"verdict":"pass","items":10,"countedOnce":10,"processes":[""" + Environment.ProcessId + "]}", await client.GetStringAsync($"/api/audits/{id}/result"));
    }

    [PgFact]
    public async Task TwoHostsInOneProcess_OnTheirOwnDatabases_EachFinishItsOwnAudit()
    {
        // Hangfire keeps storage, activator and logging process-wide by default; each host must use its own.
        await using var first = await ServiceUnderTest.StartAsync(workers: 1);
        await using var second = await ServiceUnderTest.StartAsync(workers: 1);
        using var a = await first.ClientAsync("team-a");
        using var b = await second.ClientAsync("team-b");
        var idA = await AuditEndpointsTests.SubmitAsync(a, await Uploads.ModelAsync(a), await Uploads.ImageSetAsync(a, 3), 2);
        var idB = await AuditEndpointsTests.SubmitAsync(b, await Uploads.ModelAsync(b), await Uploads.ImageSetAsync(b, 4), 2);

        var endA = await first.WaitForEndAsync(a, idA);
        var endB = await second.WaitForEndAsync(b, idB);

        Assert.Equal(("done", 6), (endA.State, endA.Progress.ItemsDone));
        Assert.Equal(("done", 8), (endB.State, endB.Progress.ItemsDone));
    }

    [PgFact]
    public async Task Audit_ChunksLongerThanTheLease_AreNotTakenTwice()
    {
        // Lease 5 s, reconciler every second, chunks of 12 s: only the heartbeat keeps other workers off them.
        await using var svc = await ServiceUnderTest.StartAsync(workers: 3, engine: new CountingEngine(chunkTime: TimeSpan.FromSeconds(12)));
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var end = await svc.WaitForEndAsync(client, id);

        Assert.Equal(("done", 4), (end.State, end.Progress.ItemsDone));
        await using var conn = await svc.Db.DataSource.OpenConnectionAsync();
        await using var cmd = new Npgsql.NpgsqlCommand("SELECT max(attempt) FROM audit_chunks WHERE audit_id = $1", conn);
        cmd.Parameters.Add(new Npgsql.NpgsqlParameter { Value = id });
        Assert.Equal(1, await cmd.ExecuteScalarAsync());
    }

    [PgFact]
    public async Task Audit_EngineRejectsInput_EndsFailedWithTheMessage()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 1, engine: new RejectingEngine());
        using var client = await svc.ClientAsync("team-a");
        var id = await AuditEndpointsTests.SubmitAsync(client, await Uploads.ModelAsync(client), await Uploads.ImageSetAsync(client, 2), 2);

        var end = await svc.WaitForEndAsync(client, id);

        Assert.Equal("failed", end.State);
        Assert.Contains("cat/cat-000.png", end.Error, StringComparison.Ordinal);
        var verdict = await client.GetAsync($"/api/audits/{id}/verdict");
        Assert.Equal(System.Net.HttpStatusCode.Conflict, verdict.StatusCode);
    }

    /// <summary>Reads sets like the counting engine, then refuses the first image as the real engine would a corrupt file.</summary>
    private sealed class RejectingEngine : AuditSvc.Api.Engine.IAuditEngine
    {
        private readonly CountingEngine _inner = new();
        public bool SplitsIntoChunks => true;
        public Task<AuditSvc.Api.Engine.ModelIntake> InspectModelAsync(string modelPath, CancellationToken ct) => _inner.InspectModelAsync(modelPath, ct);
        public Task<AuditSvc.Core.ImageSets.ItemTable> IntakeImageSetAsync(string folder, IReadOnlyList<string>? classNames, CancellationToken ct) =>
            _inner.IntakeImageSetAsync(folder, classNames, ct);
        public Task<byte[]> RunChunkAsync(AuditSvc.Api.Engine.AuditInputs inputs, int start, int count, CancellationToken ct) =>
            throw new AuditSvc.Core.AuditInputException(inputs.Items.Items[0].RelativePath, "not a decodable image");
        public Task<string> RenderReportAsync(AuditSvc.Api.Engine.AuditInputs inputs, string auditJson, CancellationToken ct) =>
            _inner.RenderReportAsync(inputs, auditJson, ct);
        public Task<AuditSvc.Data.Audits.AuditOutcome> FinishAsync(AuditSvc.Api.Engine.AuditInputs inputs, AuditSvc.Api.Engine.IChunkResults chunks, CancellationToken ct) =>
            _inner.FinishAsync(inputs, chunks, ct);
    }
}
