using System.Net;
using System.Text.Json;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Cli.Tests.Commands;
using AuditSvc.Core;
using AuditSvc.Core.ImageSets;
using AuditSvc.Data.Audits;
using AuditSvc.Data.Tests;
using Xunit.Abstractions;

namespace AuditSvc.Api.Tests.Faults;

/// <summary>
/// The artifact root's disk fills during an upload (while it is received, or while an archive is unpacked): 507 Insufficient Storage as a problem document saying what failed
/// and what to do, nothing of the upload left, and the service goes on serving (a later upload that fits succeeds).
/// </summary>
public sealed class FullDiskTests(ITestOutputHelper output)
{
    [PgTheory]
    [InlineData("model")]
    [InlineData("image-set")]
    public async Task Upload_DiskFillsUp_Is507AndLeavesNothing(string kind)
    {
        var root = Directory.CreateTempSubdirectory("auditsvc-full-").FullName;
        var mounted = FullDisk.TryMount(root, "1m");
        output.WriteLine(mounted ? "artifact root: a 1 MiB tmpfs" : "mount refused: the engine's model check or set intake writes to /dev/full instead");
        try
        {
            await using var svc = await ServiceUnderTest.StartAsync(workers: 0,
                engine: mounted ? null : new DevFullEngine(),
                settings: new Dictionary<string, string?> { ["AUDITSVC_DATA"] = root });
            using var client = await svc.ClientAsync("team-a");
            HttpResponseMessage response;
            if (kind == "model")
            {
                // Mounted: the upload itself fills the disk. Else the model check writes to /dev/full.
                var big = new byte[mounted ? 3 << 20 : 4096];
                new Random(5).NextBytes(big);
                response = await PostModelAsync(client, big);
            }
            else
            {
                // Mounted: a small archive whose images (zeros, 400 KiB each) fill the disk while it is unpacked.
                // Else the set's intake writes to /dev/full.
                response = await Uploads.PostZipAsync(client, mounted ? ZerosZip(3, 400 << 10) : Uploads.Zip(2, "cat", "dog"));
            }

            Assert.Equal((HttpStatusCode)507, response.StatusCode);
            Assert.Equal("application/problem+json", response.Content.Headers.ContentType!.MediaType);
            var title = JsonDocument.Parse(await response.Content.ReadAsStringAsync()).RootElement.GetProperty("title").GetString()!;
            Assert.Contains("disk is full", title, StringComparison.Ordinal);
            Assert.Contains("free space under the artifact root", title, StringComparison.Ordinal);
            Assert.DoesNotContain(root, title, StringComparison.Ordinal);
            Assert.True(response.Headers.RetryAfter is not null, "Retry-After missing");
            var left = new[] { "blobs", "models", "sets", "scratch" }.Select(f => Path.Combine(root, f)).Where(Directory.Exists)
                .SelectMany(d => Directory.GetFiles(d, "*", SearchOption.AllDirectories)).ToList();
            Assert.True(left.Count == 0, "left under the artifact root: " + string.Join(", ", left));

            if (mounted)
            {
                // The space the refused upload took is free again: a small upload fits.
                Assert.Equal(HttpStatusCode.Created, (await PostModelAsync(client, [1, 2, 3, 4, 5])).StatusCode);
            }
        }
        finally
        {
            if (mounted) FullDisk.Unmount(root);
            try { Directory.Delete(root, recursive: true); } catch (IOException) { }
        }
    }

    private static byte[] ZerosZip(int files, int size)
    {
        using var ms = new MemoryStream();
        using (var zip = new System.IO.Compression.ZipArchive(ms, System.IO.Compression.ZipArchiveMode.Create, leaveOpen: true))
        {
            for (int i = 0; i < files; i++)
            {
                using var s = zip.CreateEntry($"{(i % 2 == 0 ? "cat" : "dog")}/{i}.png").Open();
                s.Write(new byte[size]);
            }
        }
        return ms.ToArray();
    }

    private static async Task<HttpResponseMessage> PostModelAsync(HttpClient client, byte[] bytes)
    {
        using var form = new MultipartFormDataContent();
        var file = new ByteArrayContent(bytes);
        file.Headers.ContentType = new System.Net.Http.Headers.MediaTypeHeaderValue("application/octet-stream");
        form.Add(file, "model", "model.onnx");
        return await client.PostAsync("/api/models", form);
    }

    /// <summary>Where no tmpfs can be mounted: checking a model writes to /dev/full, a real ENOSPC from the kernel.</summary>
    private sealed class DevFullEngine : IAuditEngine
    {
        private readonly CountingEngine _inner = new();
        public bool SplitsIntoChunks => true;

        public async Task<ModelIntake> InspectModelAsync(string modelPath, CancellationToken ct)
        {
            await File.WriteAllBytesAsync("/dev/full", new byte[4096], ct);
            return await _inner.InspectModelAsync(modelPath, ct);
        }

        public async Task<ItemTable> IntakeImageSetAsync(string folder, IReadOnlyList<string>? classNames, CancellationToken ct)
        {
            await File.WriteAllBytesAsync("/dev/full", new byte[4096], ct);
            return await _inner.IntakeImageSetAsync(folder, classNames, ct);
        }

        public Task<byte[]> RunChunkAsync(AuditInputs inputs, int start, int count, CancellationToken ct) => _inner.RunChunkAsync(inputs, start, count, ct);
        public Task<string> RenderReportAsync(AuditInputs inputs, string auditJson, CancellationToken ct) => _inner.RenderReportAsync(inputs, auditJson, ct);
        public Task<AuditOutcome> FinishAsync(AuditInputs inputs, IChunkResults chunks, CancellationToken ct) => _inner.FinishAsync(inputs, chunks, ct);
    }
}
