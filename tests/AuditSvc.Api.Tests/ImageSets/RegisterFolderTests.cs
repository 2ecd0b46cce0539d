using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Data.Tests;

namespace AuditSvc.Api.Tests.ImageSets;

/// <summary>
/// `POST /api/image-sets/folder` registers only folders the calling team put there (incoming/&lt;team&gt;/) or uploaded;
/// every other path, whichever way it tries to leave, gets the one answer, so nothing can be probed through it.
/// </summary>
public class RegisterFolderTests
{
    private static void ClassTree(string folder)
    {
        foreach (var label in new[] { "ok", "defect" })
        {
            Directory.CreateDirectory(Path.Combine(folder, label));
            for (var i = 0; i < 3; i++) File.WriteAllText(Path.Combine(folder, label, $"{i}.png"), $"{label}{i}");
        }
    }

    private static async Task<string> RefusalAsync(HttpResponseMessage response)
    {
        await response.Content.LoadIntoBufferAsync();
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var body = JsonDocument.Parse(await response.Content.ReadAsStringAsync()).RootElement;
        return body.GetProperty("errors").GetProperty("path")[0].GetString()!;
    }

    public static TheoryData<string> EscapeKinds => new()
    {
        "dotdot", "absolute", "other-team-drop", "other-team-upload", "link-to-other-team", "missing-own", "root-itself",
        "incoming-itself", "sets-itself", "backslash",
    };

    [PgTheory]
    [MemberData(nameof(EscapeKinds))]
    public async Task RegisterFolder_EscapeKind_RefusedWithTheOneAnswer(string kind)
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var a = await svc.ClientAsync("team-a");
        using var b = await svc.ClientAsync("team-b");
        ClassTree(Path.Combine(svc.DataRoot, "incoming", "team-b", "theirs"));
        Directory.CreateDirectory(Path.Combine(svc.DataRoot, "incoming", "team-a"));
        var theirUpload = await Uploads.ImageSetAsync(b);
        var theirSet = "sets/" + theirUpload.GetProperty("contentHash").GetString()!.Replace("sha256:", "", StringComparison.Ordinal);
        Assert.True(Directory.Exists(Path.Combine(svc.DataRoot, theirSet)));
        File.CreateSymbolicLink(Path.Combine(svc.DataRoot, "incoming", "team-a", "peek"), Path.Combine(svc.DataRoot, "incoming", "team-b", "theirs"));
        string path = kind switch
        {
            "dotdot" => "incoming/team-a/../team-b/theirs",
            "absolute" => Path.Combine(svc.DataRoot, "incoming", "team-b", "theirs"),
            "other-team-drop" => "incoming/team-b/theirs",
            "other-team-upload" => theirSet,
            "link-to-other-team" => "incoming/team-a/peek",
            "missing-own" => "incoming/team-a/nothing-here",
            "root-itself" => ".",
            "incoming-itself" => "incoming",
            "sets-itself" => "sets",
            "backslash" => "incoming\\team-b\\theirs",
            _ => throw new ArgumentOutOfRangeException(nameof(kind)),
        };

        var refusal = await RefusalAsync(await a.PostAsJsonAsync("/api/image-sets/folder", new { path }));
        // The same text as for a path that cannot exist anywhere: nothing learnt about what is there.
        Assert.Equal(await RefusalAsync(await a.PostAsJsonAsync("/api/image-sets/folder", new { path = "../../no/such/place" })), refusal);
        Assert.DoesNotContain(svc.DataRoot, refusal, StringComparison.Ordinal);
    }

    [PgFact]
    public async Task RegisterFolder_OwnDropFolderAndOwnUpload_AreRegistered()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var a = await svc.ClientAsync("team-a");
        ClassTree(Path.Combine(svc.DataRoot, "incoming", "team-a", "line4"));
        var own = await a.PostAsJsonAsync("/api/image-sets/folder", new { path = "incoming/team-a/line4" });
        Assert.Equal(HttpStatusCode.Created, own.StatusCode);

        var upload = await Uploads.ImageSetAsync(a);
        var set = "sets/" + upload.GetProperty("contentHash").GetString()!.Replace("sha256:", "", StringComparison.Ordinal);
        var again = await a.PostAsJsonAsync("/api/image-sets/folder", new { path = set, name = "same upload, named" });
        Assert.Equal(HttpStatusCode.Created, again.StatusCode);
    }

    [PgFact]
    public async Task RegisterFolder_RowsLeavingTheFolder_AreRefusedByIntake()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0, realEngine: true);
        using var a = await svc.ClientAsync("team-a");
        var theirs = Path.Combine(svc.DataRoot, "incoming", "team-b", "secret.png");
        Directory.CreateDirectory(Path.GetDirectoryName(theirs)!);
        using (var img = new SixLabors.ImageSharp.Image<SixLabors.ImageSharp.PixelFormats.Rgb24>(8, 8)) SixLabors.ImageSharp.ImageExtensions.SaveAsPng(img, theirs);
        var mine = Path.Combine(svc.DataRoot, "incoming", "team-a", "set");
        Directory.CreateDirectory(mine);
        File.Copy(theirs, Path.Combine(mine, "mine.png"));
        File.CreateSymbolicLink(Path.Combine(mine, "link.png"), theirs);
        File.WriteAllText(Path.Combine(mine, "manifest.csv"),
            $"image,label\nmine.png,0\n../../team-b/secret.png,1\n{theirs},1\nlink.png,1\n/dev/zero,1\n");

        var response = await a.PostAsJsonAsync("/api/image-sets/folder", new { path = "incoming/team-a/set" });

        Assert.Equal(HttpStatusCode.Created, response.StatusCode);
        var body = await response.Content.ReadFromJsonAsync<JsonElement>();
        Assert.Equal(1, body.GetProperty("itemCount").GetInt32());
        var reasons = body.GetProperty("report").GetProperty("problems").EnumerateArray().Select(p => p.GetProperty("reason").GetString()).ToList();
        Assert.Equal(4, reasons.Count);
        Assert.All(reasons, r => Assert.Equal(PathContainment.Refused, r));
    }
}
