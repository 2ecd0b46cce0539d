using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;

namespace AuditSvc.Api.Tests.Faults;

/// <summary>
/// The service is stopped while a client is half-way through an upload: after a restart nothing of it is visible
/// (no model, no image set) and nothing of it is left under the artifact root.
/// </summary>
public sealed class UploadInterruptedTests
{
    [PgFact]
    public Task ModelUpload_ServiceStoppedMidway_NothingRegisteredAndNoPartialFiles() => StopMidwayAsync("/api/models", "model", "big.onnx");

    [PgFact]
    public Task ImageSetUpload_ServiceStoppedMidway_NothingRegisteredAndNoPartialFiles() => StopMidwayAsync("/api/image-sets", "archive", "big.zip");

    private static async Task StopMidwayAsync(string route, string part, string fileName)
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var key = client.DefaultRequestHeaders.Authorization!.Parameter!;
        using var release = new CancellationTokenSource();
        var body = new StreamContent(new StallingStream(2 << 20, release.Token));
        body.Headers.ContentType = new MediaTypeHeaderValue("application/octet-stream");
        using var form = new MultipartFormDataContent { { new StringContent("half"), "name" }, { body, part, fileName } };
        var upload = client.PostAsync(route, form);

        var scratch = Path.Combine(svc.DataRoot, "scratch"); // the process's own folder is inside it
        await ServiceUnderTest.PollAsync(() => Task.FromResult(Directory.Exists(scratch) && Directory.GetFiles(scratch, "*", SearchOption.AllDirectories).Any(f => new FileInfo(f).Length > 0)),
            started => started, "the upload to reach the server's scratch file");
        using (var grace = new CancellationTokenSource(TimeSpan.FromSeconds(2)))
            await svc.App.StopAsync(grace.Token); // Kestrel waits for the request, then aborts it
        await release.CancelAsync();
        var answer = await Record.ExceptionAsync(async () => (await upload).EnsureSuccessStatusCode());
        Assert.NotNull(answer); // the upload did not succeed

        await using var again = svc.BuildAgain();
        await again.StartAsync();
        try
        {
            using var after = new HttpClient { BaseAddress = ServiceUnderTest.AddressOf(again) };
            after.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);

            Assert.Equal(0, (await after.GetFromJsonAsync<JsonElement>("/api/models")).GetArrayLength());
            Assert.Equal(0, (await after.GetFromJsonAsync<JsonElement>("/api/image-sets")).GetArrayLength());
            var left = Directory.GetFiles(svc.DataRoot, "*", SearchOption.AllDirectories)
                .Select(f => Path.GetRelativePath(svc.DataRoot, f))
                .Where(f => !f.StartsWith("keys" + Path.DirectorySeparatorChar, StringComparison.Ordinal)) // the data-protection keys
                .ToList();
            Assert.True(left.Count == 0, "left under the artifact root: " + string.Join(", ", left));
        }
        finally
        {
            await again.StopAsync();
        }
    }

    /// <summary>A request body that sends <paramref name="first"/> bytes, then stalls like a slow client until released.</summary>
    private sealed class StallingStream(long first, CancellationToken released) : Stream
    {
        private long _sent;

        public override bool CanRead => true;
        public override bool CanSeek => false;
        public override bool CanWrite => false;
        public override long Length => throw new NotSupportedException();
        public override long Position { get => _sent; set => throw new NotSupportedException(); }

        public override async ValueTask<int> ReadAsync(Memory<byte> buffer, CancellationToken cancellationToken = default)
        {
            if (_sent >= first)
            {
                using var either = CancellationTokenSource.CreateLinkedTokenSource(released, cancellationToken);
                try { await Task.Delay(Timeout.Infinite, either.Token); }
                catch (OperationCanceledException) { }
                throw new IOException("the client went away");
            }
            var n = (int)Math.Min(buffer.Length, first - _sent);
            buffer.Span[..n].Fill(0x5A);
            _sent += n;
            return n;
        }

        public override Task<int> ReadAsync(byte[] buffer, int offset, int count, CancellationToken cancellationToken) =>
            ReadAsync(buffer.AsMemory(offset, count), cancellationToken).AsTask();

        public override int Read(byte[] buffer, int offset, int count) => ReadAsync(buffer, offset, count).GetAwaiter().GetResult();
        public override void Flush() { }
        public override long Seek(long offset, SeekOrigin origin) => throw new NotSupportedException();
        public override void SetLength(long value) => throw new NotSupportedException();
        public override void Write(byte[] buffer, int offset, int count) => throw new NotSupportedException();
    }
}
