using System.Text.Json;
using AuditSvc.Api.Engine;
using AuditSvc.Core;
using AuditSvc.Core.ImageSets;
using AuditSvc.Data.Audits;

namespace AuditSvc.Api.Tests;

/// <summary>
/// A trivial engine for the queue mechanics: a chunk's result is the item indices it saw and the process that
/// ran it; the finish checks that every item was counted exactly once. Intake reads a class-per-folder tree.
/// Optional marker folder: each chunk drops "&lt;pid&gt;-&lt;chunk&gt;.started" there, and a "hang" file makes it wait forever.
/// </summary>
public sealed class CountingEngine(string? markers = null, int waitForPeers = 0, TimeSpan chunkTime = default) : IAuditEngine
{
    public sealed record Chunk(int Pid, int[] Items);

    /// <summary>How long the finish (merge and analysis) takes; it stops early when its token is cancelled.</summary>
    public TimeSpan FinishTime { get; set; }

    /// <summary>Set when a finish begins.</summary>
    public TaskCompletionSource FinishStarted { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);

    /// <summary>Set when a finish was stopped by its cancellation token.</summary>
    public TaskCompletionSource FinishCancelled { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);

    public bool SplitsIntoChunks => true;

    public Task<ModelIntake> InspectModelAsync(string modelPath, CancellationToken ct)
    {
        if (!File.Exists(modelPath)) throw new AuditInputException(modelPath, "model file not found");
        var recipe = Path.ChangeExtension(modelPath, ".recipe.json");
        return Task.FromResult(new ModelIntake(File.Exists(recipe) ? File.ReadAllText(recipe) : "{}", """[{"name":"conv1","channels":4}]"""));
    }

    public Task<ItemTable> IntakeImageSetAsync(string folder, IReadOnlyList<string>? classNames, CancellationToken ct)
    {
        var labels = Directory.GetDirectories(folder).Select(Path.GetFileName).Order(StringComparer.Ordinal).ToList();
        var items = new List<ImageItem>();
        foreach (var (label, li) in labels.Select((l, i) => (l!, i)))
        {
            foreach (var file in Directory.GetFiles(Path.Combine(folder, label)).Order(StringComparer.Ordinal))
            {
                var rel = Path.GetRelativePath(folder, file);
                items.Add(new ImageItem(items.Count, items.Count + 1, file, rel, li, [], Convert.ToHexStringLower(System.Security.Cryptography.SHA256.HashData(File.ReadAllBytes(file)))));
            }
        }
        return Task.FromResult(new ItemTable(labels!, [], items, new IntakeReport(folder, items.Count, items.Count, [])));
    }

    public async Task<byte[]> RunChunkAsync(AuditInputs inputs, int start, int count, CancellationToken ct)
    {
        if (markers is not null)
        {
            var pid = Environment.ProcessId;
            File.WriteAllText(Path.Combine(markers, $"{pid}-{start}.started"), "");
            if (File.Exists(Path.Combine(markers, $"hang-{pid}")) || File.Exists(Path.Combine(markers, "hang")))
                await Task.Delay(Timeout.Infinite, CancellationToken.None); // stands still like a stuck process
            // Hold the first chunk until another process has started one too, so both provably share the audit.
            for (var i = 0; i < 600 && waitForPeers > 0 && Peers(markers) < waitForPeers; i++) await Task.Delay(100, ct);
        }
        if (chunkTime > TimeSpan.Zero) await Task.Delay(chunkTime, ct);
        var chunk = new Chunk(Environment.ProcessId, Enumerable.Range(start, count).ToArray());
        return JsonSerializer.SerializeToUtf8Bytes(chunk);
    }

    public Task<string> RenderReportAsync(AuditInputs inputs, string auditJson, CancellationToken ct) =>
        Task.FromResult($"<!doctype html><title>audit</title><pre>{System.Net.WebUtility.HtmlEncode(auditJson)}</pre>");

    public async Task<AuditOutcome> FinishAsync(AuditInputs inputs, IChunkResults chunks, CancellationToken ct)
    {
        FinishStarted.TrySetResult();
        if (FinishTime > TimeSpan.Zero)
        {
            try
            {
                await Task.Delay(FinishTime, ct);
            }
            catch (OperationCanceledException)
            {
                FinishCancelled.TrySetResult();
                throw;
            }
        }
        var parsed = new List<Chunk>();
        await foreach (var c in chunks.ReadAsync(s => JsonSerializer.Deserialize<Chunk>(s)!, ct)) parsed.Add(c);
        var seen = parsed.SelectMany(c => c.Items).ToList();
        var counts = Enumerable.Range(0, inputs.Items.Items.Count).Select(i => seen.Count(s => s == i)).ToArray();
        var verdict = counts.All(c => c == 1) ? "pass" : "block";
        var json = JsonSerializer.Serialize(new
        {
            verdict,
            items = seen.Count,
            countedOnce = counts.Count(c => c == 1),
            processes = parsed.Select(c => c.Pid).Distinct().Order().ToArray(),
        });
        return new AuditOutcome(json, verdict, [new FindingRow(0, "conv1", 3, "stamp", "yes", 4.0, 0.01, "top-left", "{}")],
            [new AttributeScoreRow("stamp", verdict == "pass" ? 0.05 : 0.9, verdict, "{}")]);
    }

    private static int Peers(string markers) =>
        Directory.GetFiles(markers, "*.started").Select(f => Path.GetFileName(f).Split('-')[0]).Distinct().Count();
}
