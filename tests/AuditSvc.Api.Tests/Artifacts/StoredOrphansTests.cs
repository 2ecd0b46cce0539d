using System.Net;
using System.Security.Cryptography;
using AuditSvc.Api.Artifacts;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Cli.Commands;
using AuditSvc.Data.Artifacts;
using AuditSvc.Data.Tests;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Tests.Artifacts;

/// <summary>
/// Stored files that no row names (an upload cut off between moving its file into place and writing its row) are
/// removed under their content's lock; registered ones, and ones whose lock an upload holds, stay. An upload waits for
/// its content's lock, so an identical upload being registered or refused at that moment is never undercut.
/// </summary>
public class StoredOrphansTests
{
    private static string RandomHash() => Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(32));

    private static string Under(string root, string relative)
    {
        var full = Path.Combine(root, relative);
        Directory.CreateDirectory(Path.GetDirectoryName(full)!);
        File.WriteAllText(full, "left by a process killed before its row was written");
        return full;
    }

    // Files, links and the set and model folders; blobs' shard folders (blobs/sha256/ab) stay when emptied, since an
    // upload may be about to move its file into one.
    private static List<string> Stored(string root) =>
        new[] { "blobs", "sets", "models" }.Select(f => Path.Combine(root, f)).Where(Directory.Exists)
            .SelectMany(d => Directory.GetFiles(d, "*", SearchOption.AllDirectories).Concat(d.EndsWith("blobs", StringComparison.Ordinal) ? [] : Directory.GetDirectories(d)))
            .Select(p => Path.GetRelativePath(root, p)).Order(StringComparer.Ordinal).ToList();

    [PgFact]
    public async Task Sweep_UnregisteredStoredFiles_AreRemoved_RegisteredAndLockedOnesStay()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0, realEngine: true);
        using var client = await svc.ClientAsync("team-a");
        await Uploads.ModelAsync(client, File.ReadAllBytes(DemoCommand.FindModel("fruit-cue.onnx")), recipe: null);
        Assert.Equal(HttpStatusCode.Created, (await Uploads.PostZipAsync(client, PictureZip())).StatusCode);
        var registered = Stored(svc.DataRoot);
        Assert.Contains(registered, p => p.StartsWith("sets/", StringComparison.Ordinal));
        Assert.Contains(registered, p => p.StartsWith("models/", StringComparison.Ordinal));

        string blob = RandomHash(), set = RandomHash(), model = RandomHash(), locked = RandomHash();
        var orphans = new[]
        {
            Under(svc.DataRoot, $"blobs/sha256/{blob[..2]}/{blob}.onnx"),
            Path.GetDirectoryName(Under(svc.DataRoot, $"sets/{set}/cat/cat-000.png"))!,
            Path.GetDirectoryName(Under(svc.DataRoot, $"models/{model[..16]}-none/model.onnx"))!,
        };
        var held = Under(svc.DataRoot, $"blobs/sha256/{locked[..2]}/{locked}.zip");
        var locks = svc.App.Services.GetRequiredService<ContentLocks>();
        var sweep = svc.App.Services.GetRequiredService<StoredOrphans>();

        await using (await locks.HoldAsync(locked, CancellationToken.None))
        {
            // Grace zero: every entry is old enough to be judged.
            Assert.Equal(3, await sweep.SweepAsync(TimeSpan.Zero, CancellationToken.None));
            Assert.All(orphans, p => Assert.False(Path.Exists(p), p));
            Assert.True(File.Exists(held), "a file whose content lock is held is being registered: it stays");
        }
        Assert.Equal(1, await sweep.SweepAsync(TimeSpan.Zero, CancellationToken.None));
        Assert.False(File.Exists(held));

        // Everything a row names is untouched, and the default grace leaves fresh orphans alone.
        Assert.Equal(registered, Stored(svc.DataRoot));
        var fresh = Under(svc.DataRoot, $"blobs/sha256/{blob[..2]}/{blob}.onnx");
        Assert.Equal(0, await sweep.SweepAsync(StoredOrphans.Grace, CancellationToken.None));
        Assert.True(File.Exists(fresh));
    }

    [PgFact]
    public async Task Upload_WhileItsContentLockIsHeld_WaitsThenRegisters()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0, realEngine: true);
        using var client = await svc.ClientAsync("team-a");
        var bytes = File.ReadAllBytes(DemoCommand.FindModel("fruit-cue.onnx"));
        var hash = Convert.ToHexStringLower(SHA256.HashData(bytes));
        var locks = svc.App.Services.GetRequiredService<ContentLocks>();

        Task<HttpResponseMessage> upload;
        await using (await locks.HoldAsync(hash, CancellationToken.None))
        {
            upload = Uploads.PostModelAsync(client, bytes, null, "waits");
            // Not a speed check: with the lock held the upload cannot register, however long we wait.
            Assert.NotSame(upload, await Task.WhenAny(upload, Task.Delay(TimeSpan.FromSeconds(2))));
            Assert.False(Directory.Exists(Path.Combine(svc.DataRoot, "models")), "nothing is placed while an identical upload holds the content");
        }
        Assert.Equal(HttpStatusCode.Created, (await upload).StatusCode);
        Assert.True(File.Exists(Path.Combine(svc.DataRoot, "blobs", "sha256", hash[..2], hash + ".onnx")));
    }

    [Fact]
    public void KeyOf_TakesTheHashsFirstEightDigits_WithOrWithoutItsPrefix()
    {
        Assert.Equal(0x0badcafe, ContentLocks.KeyOf("sha256:0badcafe" + new string('0', 56)));
        Assert.Equal(unchecked((int)0xffffffff), ContentLocks.KeyOf("ffffffff" + new string('1', 56)));
        Assert.Equal(ContentLocks.KeyOf("0123456789abcdef"), ContentLocks.KeyOf("01234567" + new string('9', 56)));
        Assert.Throws<ArgumentException>(() => ContentLocks.KeyOf("sha256:xyz"));
    }

    // Class folders 0 and 1 (class indices: no model names them) of small decodable pictures.
    private static byte[] PictureZip()
    {
        using var ms = new MemoryStream();
        using (var zip = new System.IO.Compression.ZipArchive(ms, System.IO.Compression.ZipArchiveMode.Create, leaveOpen: true))
        {
            for (int i = 0; i < 8; i++)
            {
                using var image = new SixLabors.ImageSharp.Image<SixLabors.ImageSharp.PixelFormats.Rgb24>(16, 16,
                    new SixLabors.ImageSharp.PixelFormats.Rgb24((byte)(i * 30), 90, 160));
                using var entry = zip.CreateEntry($"{i % 2}/{i}.png").Open();
                SixLabors.ImageSharp.ImageExtensions.SaveAsPng(image, entry);
            }
        }
        return ms.ToArray();
    }
}
