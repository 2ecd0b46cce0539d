using System.Diagnostics;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using AuditSvc.Api.Tests.Artifacts;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Data.Tests;

namespace AuditSvc.Api.Tests.Faults;

/// <summary>
/// A process killed (SIGKILL) while it receives an upload leaves its partial file in its scratch folder; the next
/// service start removes it, and leaves registered models and image sets alone.
/// </summary>
public sealed class ScratchSweepTests
{
    [PgFact]
    public async Task Start_AfterAProcessWasKilledMidUpload_RemovesItsPartialFilesAndKeepsRegisteredOnes()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        using var client = await svc.ClientAsync("team-a");
        await Uploads.ModelAsync(client);
        await Uploads.ImageSetAsync(client, 3);
        var registered = Stored(svc.DataRoot);
        Assert.NotEmpty(registered);

        // A real process, killed with SIGKILL while it holds a partial upload in its scratch.
        var psi = new ProcessStartInfo("dotnet") { UseShellExecute = false, RedirectStandardOutput = true };
        psi.ArgumentList.Add("exec");
        psi.ArgumentList.Add(typeof(WorkerProgram).Assembly.Location);
        psi.ArgumentList.Add("scratch");
        psi.ArgumentList.Add(svc.DataRoot);
        using var killed = Process.Start(psi)!;
        var partial = await killed.StandardOutput.ReadLineAsync();
        Assert.True(partial is not null && File.Exists(partial), "the child process did not start its upload");
        killed.Kill(); // SIGKILL: no finally block, no disposal runs
        await killed.WaitForExitAsync();
        // And what an older version's killed process would leave: an unowned scratch/<guid> file, an hour old.
        var legacy = Path.Combine(svc.DataRoot, "scratch", Guid.NewGuid().ToString("N"));
        File.WriteAllText(legacy, "partial");
        File.SetLastWriteTimeUtc(legacy, DateTime.UtcNow.AddHours(-2));
        Assert.True(File.Exists(partial) && File.Exists(legacy), "the kill left its partial file, as a kill does");

        await using var again = svc.BuildAgain();
        await again.StartAsync();
        try
        {
            Assert.False(File.Exists(partial), "the killed upload's partial file survived the start");
            Assert.False(Directory.Exists(Path.GetDirectoryName(partial)), "the killed process's scratch folder survived the start");
            Assert.False(File.Exists(legacy));
            Assert.Equal(registered, Stored(svc.DataRoot));
            using var after = new HttpClient { BaseAddress = ServiceUnderTest.AddressOf(again) };
            after.DefaultRequestHeaders.Authorization = client.DefaultRequestHeaders.Authorization;
            Assert.Equal(1, (await after.GetFromJsonAsync<JsonElement>("/api/models")).GetArrayLength());
            Assert.Equal(1, (await after.GetFromJsonAsync<JsonElement>("/api/image-sets")).GetArrayLength());
        }
        finally
        {
            await again.StopAsync();
        }
    }

    [PgFact]
    public async Task Start_WithAnotherLiveProcessUploading_LeavesItsScratchAlone()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0);
        var live = ScratchSpaceTests.LeaveKilledUpload(svc.DataRoot, "99-alive");
        using var held = new FileStream(Path.Combine(svc.DataRoot, Api.Artifacts.ScratchSpace.OwnersFolder, "99-alive.lock"),
            FileMode.Open, FileAccess.ReadWrite, FileShare.None);

        await using var again = svc.BuildAgain();
        await again.StartAsync();
        await again.StopAsync();

        Assert.NotEmpty(Directory.GetFiles(live, "*", SearchOption.AllDirectories));
    }

    private static List<string> Stored(string root) =>
        new[] { "blobs", "models", "sets" }.Select(f => Path.Combine(root, f)).Where(Directory.Exists)
            .SelectMany(d => Directory.GetFileSystemEntries(d, "*", SearchOption.AllDirectories))
            .Select(p => Path.GetRelativePath(root, p)).Order(StringComparer.Ordinal).ToList();
}
