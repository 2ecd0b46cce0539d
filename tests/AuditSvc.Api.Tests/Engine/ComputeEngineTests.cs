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

    [Fact]
    public async Task FinishAsync_ChunksHandedOverOneAtATime_HoldsOneChunkAndEqualsAllAtOnceAndInProcess()
    {
        var root = Path.Combine(Path.GetTempPath(), "auditsvc-engine-" + Guid.NewGuid().ToString("N"));
        try
        {
            var manifest = DemoSetGenerator.Write(Path.Combine(root, "set"), new DemoSetOptions(300, Agreement, Seed));
            var model = Path.Combine(RepoRoot(), "seed-demo", "models", "fruit-cue.onnx");
            var options = Microsoft.Extensions.Options.Options.Create(new AuditSvc.Api.Hosting.ServiceOptions { DataRoot = root });
            using var scratch = new AuditSvc.Api.Artifacts.ScratchSpace(options);
            var engine = new AuditSvc.Api.Engine.ComputeEngine(new AuditSvc.Api.Artifacts.ArtifactStore(options, scratch,
                new AuditSvc.Data.Artifacts.ContentLocks(Npgsql.NpgsqlDataSource.Create("Host=127.0.0.1;Port=1"))));
            var items = await engine.IntakeImageSetAsync(Path.GetDirectoryName(manifest)!, ["sound", "spotted", "mouldy"], default);
            var inputs = new AuditSvc.Api.Engine.AuditInputs(Guid.NewGuid(), model, "{}", Path.GetDirectoryName(manifest)!, items, "{}", 1,
                Path.Combine(root, "work"));
            var stored = new List<byte[]>();
            for (int start = 0; start < 300; start += 50) stored.Add(await engine.RunChunkAsync(inputs, start, 50, default));
            // Six chunks of one model, one after another: one pass (one ONNX Runtime session) served them all.
            Assert.Equal((1, 1), engine.ChunkPasses);
            var local = AuditPipeline.Run(new AuditRequest(model, manifest, new ModelLoadOptions(), new AuditPolicy(), new PassOptions(),
                Path.Combine(root, "local-work"))).Result;
            var parsed = stored.Select(b => AuditSvc.Api.Engine.ComputeEngine.ReadChunk(new MemoryStream(b))).ToList();
            var allAtOnce = AuditPipeline.FinishChunks(AuditSvc.Compute.Models.ModelIntake.Load(model), items, parsed.Select(c => c.Result).ToList(),
                new AuditPolicy(), new PassOptions { InferenceThreads = 1, DecodeThreads = 1 }, parsed.Sum(c => c.PassSeconds));
            parsed = null;
            var source = new TrackingChunks(stored);

            var outcome = await engine.FinishAsync(inputs, source, default);

            Assert.Equal(6, source.Read);
            Assert.True(source.MostAliveBeforeARead <= 1, $"{source.MostAliveBeforeARead} earlier chunks were still held when the next was read");
            var streamed = AuditJson.Deserialize(outcome.ResultJson);
            Assert.Equal(Timeless(allAtOnce), Timeless(streamed));
            Assert.NotEmpty(local.Findings);
            Assert.Equal(local.Verdict, streamed.Verdict);
            Assert.Equal(local.Findings.Select(f => (f.Layer, f.Unit, f.Attribute, f.Value, f.QValue)), streamed.Findings.Select(f => (f.Layer, f.Unit, f.Attribute, f.Value, f.QValue)));
            Assert.Equal(local.Findings.SelectMany(f => f.Exemplars.Select(e => (e.Item, e.Score, e.Box))), streamed.Findings.SelectMany(f => f.Exemplars.Select(e => (e.Item, e.Score, e.Box))));
            Assert.Equal(local.Attributes.Select(a => (a.Name, a.Leakage, a.Verdict)), streamed.Attributes.Select(a => (a.Name, a.Leakage, a.Verdict)));
        }
        finally
        {
            Directory.Delete(root, recursive: true);
        }
    }

    // The whole document but the clock: when it was made and how long each phase took.
    private static string Timeless(AuditResult r) =>
        AuditJson.Serialize(r with { CreatedAt = default, Phases = null, Pass = r.Pass with { InterventionSeconds = 0 } });

    /// <summary>
    /// Chunk results kept in memory and handed over the way the database does, one row at a time. Before reading each
    /// chunk it collects garbage and counts how many chunks it handed over earlier are still reachable.
    /// </summary>
    private sealed class TrackingChunks(IReadOnlyList<byte[]> chunks) : AuditSvc.Api.Engine.IChunkResults
    {
        private readonly List<WeakReference> _handedOver = [];

        public int Read { get; private set; }

        public int MostAliveBeforeARead { get; private set; }

        public async IAsyncEnumerable<T> ReadAsync<T>(Func<Stream, T> parse, [System.Runtime.CompilerServices.EnumeratorCancellation] CancellationToken ct)
        {
            foreach (var bytes in chunks)
            {
                await Task.Yield();
                GC.Collect();
                GC.WaitForPendingFinalizers();
                GC.Collect();
                MostAliveBeforeARead = Math.Max(MostAliveBeforeARead, _handedOver.Count(w => w.IsAlive));
                using var stream = new MemoryStream(bytes, writable: false);
                var item = parse(stream);
                _handedOver.Add(new WeakReference(item is AuditSvc.Api.Engine.ComputeEngine.StoredChunk c ? c.Result : item));
                Read++;
                yield return item;
            }
        }
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
