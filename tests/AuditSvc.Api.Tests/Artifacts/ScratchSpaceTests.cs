using AuditSvc.Api.Artifacts;

namespace AuditSvc.Api.Tests.Artifacts;

/// <summary>
/// Partial files are kept in a per-process scratch folder whose lock lives as long as the process: a sweep removes
/// the folders of processes that are gone and never a live one's (its own, or another's on the same root).
/// </summary>
public class ScratchSpaceTests
{
    private static string NewRoot() => Directory.CreateTempSubdirectory("auditsvc-scratch-").FullName;

    /// <summary>What a process killed in the middle of an upload leaves: its folder with a partial file and an unheld lock.</summary>
    internal static string LeaveKilledUpload(string root, string instance = "4242-deadbeef")
    {
        var dir = Directory.CreateDirectory(Path.Combine(root, "scratch", "uploads", instance)).FullName;
        File.WriteAllBytes(Path.Combine(dir, Guid.NewGuid().ToString("N")), new byte[300_000]);
        Directory.CreateDirectory(Path.Combine(dir, Guid.NewGuid().ToString("N"), "cat")); // a half-unpacked archive
        File.WriteAllText(Path.Combine(dir, Path.GetFileName(Directory.GetDirectories(dir)[0]), "cat", "1.png"), "half");
        Directory.CreateDirectory(Path.Combine(root, ScratchSpace.OwnersFolder));
        File.WriteAllText(Path.Combine(root, ScratchSpace.OwnersFolder, instance + ".lock"), ""); // nobody holds it: the process is gone
        return dir;
    }

    [Fact]
    public void Sweep_FolderOfAProcessThatIsGone_IsRemovedWithItsLock()
    {
        var root = NewRoot();
        var dead = LeaveKilledUpload(root);
        using var scratch = new ScratchSpace(root);

        Assert.Equal(1, scratch.Sweep());

        Assert.False(Directory.Exists(dead));
        Assert.Empty(Directory.GetFiles(Path.Combine(root, ScratchSpace.OwnersFolder)));
    }

    [Fact]
    public void Sweep_FolderOfALiveProcess_IsKept()
    {
        var root = NewRoot();
        var live = LeaveKilledUpload(root, "77-cafe");
        // Another live process holds its lock (here: the test, as that process would).
        using var held = new FileStream(Path.Combine(root, ScratchSpace.OwnersFolder, "77-cafe.lock"), FileMode.Open, FileAccess.ReadWrite, FileShare.None);
        using var scratch = new ScratchSpace(root);

        Assert.Equal(0, scratch.Sweep());
        Assert.True(Directory.Exists(live));
    }

    [Fact]
    public void Sweep_ItsOwnFolderWhileInUse_IsKeptAndDisposeRemovesIt()
    {
        var root = NewRoot();
        using var first = new ScratchSpace(root);
        var partial = first.NewPath();
        File.WriteAllText(partial, "being received");
        using var second = new ScratchSpace(root);

        Assert.Equal(0, second.Sweep());
        Assert.Equal(0, first.Sweep());
        Assert.True(File.Exists(partial));

        first.Dispose();
        Assert.False(File.Exists(partial));
        Assert.Empty(Directory.GetFileSystemEntries(first.Root));
        Assert.Empty(Directory.GetFileSystemEntries(first.Owners));
    }

    [Fact]
    public void Sweep_UnownedEntries_GoOnlyOnceOld()
    {
        var root = NewRoot();
        var legacyOld = Path.Combine(root, "scratch", Guid.NewGuid().ToString("N"));
        var legacyNew = Path.Combine(root, "scratch", Guid.NewGuid().ToString("N"));
        var spill = Directory.CreateDirectory(Path.Combine(root, "scratch", "audit-" + Guid.NewGuid().ToString("N"))).FullName;
        Directory.CreateDirectory(Path.GetDirectoryName(legacyOld)!);
        File.WriteAllText(legacyOld, "partial upload of an older version");
        File.WriteAllText(legacyNew, "maybe still being written");
        File.SetLastWriteTimeUtc(legacyOld, DateTime.UtcNow - ScratchSpace.UnownedAge - TimeSpan.FromMinutes(1));
        Directory.SetLastWriteTimeUtc(spill, DateTime.UtcNow - TimeSpan.FromDays(3));
        using var scratch = new ScratchSpace(root);

        Assert.Equal(1, scratch.Sweep());

        Assert.False(File.Exists(legacyOld));
        Assert.True(File.Exists(legacyNew));
        Assert.True(Directory.Exists(spill)); // an audit's spill folder is not the sweep's business
    }

    [Fact]
    public void NewPath_NeverUsed_LeavesNoTrace()
    {
        var root = NewRoot();
        using (var scratch = new ScratchSpace(root)) scratch.Sweep();
        Assert.Empty(Directory.GetFileSystemEntries(root));
    }

    [Fact]
    public void Sweep_WhereFileLocksAreSwitchedOff_KeepsEveryOwnedFolder()
    {
        var root = NewRoot();
        var live = LeaveKilledUpload(root, "55-alive");
        using var held = new FileStream(Path.Combine(root, ScratchSpace.OwnersFolder, "55-alive.lock"), FileMode.Open, FileAccess.ReadWrite, FileShare.None);
        var psi = new System.Diagnostics.ProcessStartInfo("dotnet") { UseShellExecute = false, RedirectStandardOutput = true };
        psi.ArgumentList.Add("exec");
        psi.ArgumentList.Add(typeof(WorkerProgram).Assembly.Location);
        psi.ArgumentList.Add("sweep");
        psi.ArgumentList.Add(root);
        psi.Environment["DOTNET_SYSTEM_IO_DISABLEFILELOCKING"] = "1"; // .NET's own switch: FileShare.None locks nothing
        using var sweeper = System.Diagnostics.Process.Start(psi)!;
        var removed = sweeper.StandardOutput.ReadToEnd().Trim();
        sweeper.WaitForExit();

        Assert.Equal("0", removed);
        Assert.True(Directory.Exists(live));
        Assert.NotEmpty(Directory.GetFiles(live, "*", SearchOption.AllDirectories));
    }

    [Fact]
    public void LocksWork_OnThisMachinesTempFolder_IsTrue()
    {
        using var scratch = new ScratchSpace(NewRoot());
        Assert.True(scratch.LocksWork());
    }
}
