using System.Net;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Compute.Tests.ImageSets;
using AuditSvc.Data.Tests;

namespace AuditSvc.Api.Tests.ImageSets;

/// <summary>
/// A hostile or broken archive is a 400 problem naming the archive and its entry, and the refused upload leaves no
/// blob, no unpacked folder and no scratch file behind; nothing is written outside the artifact root.
/// </summary>
public class UploadZipTests
{
    [PgTheory]
    [InlineData("dotdot")]
    [InlineData("absolute")]
    [InlineData("backslash")]
    [InlineData("symlink")]
    [InlineData("duplicate")]
    [InlineData("file-folder")]
    [InlineData("empty")]
    [InlineData("ratio-bomb")]
    [InlineData("bzip2")]
    [InlineData("lzma")]
    public async Task Upload_HostileZip_Is400AndLeavesNothing(string kind)
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");

        var response = await Uploads.PostZipAsync(client, HostileZips.Build(kind));

        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType!.MediaType);
        var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync()).RootElement;
        Assert.Contains(problem.GetProperty("errors").EnumerateObject(), e => e.Name.StartsWith("archive", StringComparison.Ordinal));
        Assert.DoesNotContain(svc.DataRoot, problem.ToString(), StringComparison.Ordinal);
        AssertNothingLeft(svc.DataRoot);
        Assert.False(File.Exists(Path.Combine(Path.GetDirectoryName(svc.DataRoot)!, "evil.png")));
    }

    [PgFact]
    public async Task Upload_ZipWithNoUsableImage_Is400AndLeavesNothing()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");

        // Files, but no class folders: intake refuses it after the unpack.
        var response = await Uploads.PostZipAsync(client, HostileZips.Build("good-flat"));

        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        AssertNothingLeft(svc.DataRoot);
    }

    [PgFact]
    public async Task Upload_SameZipTwiceThenARejectedOne_KeepsTheFirst()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        var good = await Uploads.ImageSetAsync(client);
        var hash = good.GetProperty("contentHash").GetString()!.Replace("sha256:", "", StringComparison.Ordinal);

        Assert.Equal(HttpStatusCode.BadRequest, (await Uploads.PostZipAsync(client, HostileZips.Build("duplicate"))).StatusCode);

        Assert.True(Directory.Exists(Path.Combine(svc.DataRoot, "sets", hash)));
        Assert.Single(Directory.GetFiles(Path.Combine(svc.DataRoot, "blobs"), "*", SearchOption.AllDirectories));
    }

    private static void AssertNothingLeft(string root)
    {
        foreach (var folder in new[] { "blobs", "sets", "scratch" })
        {
            var dir = Path.Combine(root, folder);
            if (Directory.Exists(dir)) Assert.Empty(Directory.GetFiles(dir, "*", SearchOption.AllDirectories));
        }
        Assert.Empty(Directory.Exists(Path.Combine(root, "sets")) ? Directory.GetDirectories(Path.Combine(root, "sets")) : []);
    }
}
