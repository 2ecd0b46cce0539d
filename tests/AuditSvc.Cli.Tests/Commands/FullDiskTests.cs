using AuditSvc.Cli.Commands;
using AuditSvc.Cli.Demo;
using Xunit.Abstractions;

namespace AuditSvc.Cli.Tests.Commands;

/// <summary>
/// A disk that fills while `audit` writes its results is a failure of the environment: one line naming it and what to
/// do, exit 2, no stack trace, and no half-written audit.json or report.html (nor partial files) left in --out.
/// </summary>
public class FullDiskTests(ITestOutputHelper output)
{
    [Fact]
    public void Audit_OutputOnAFullDisk_ExitsTwoWithOneLineAndLeavesNoHalfWrittenFile()
    {
        var dir = CliProcess.TempDir("fulldisk");
        var manifest = DemoSetGenerator.Write(Path.Combine(dir, "set"), new DemoSetOptions(40, DemoCommand.DemoAgreement, 7));
        var outDir = Directory.CreateDirectory(Path.Combine(dir, "out")).FullName;
        var mounted = FullDisk.TryMount(outDir, "16k");
        if (mounted) output.WriteLine("--out is a 16 KiB tmpfs");
        else
        {
            // Mounting refused here: the report's partial file is a link to /dev/full, which fails every write with ENOSPC.
            File.CreateSymbolicLink(Path.Combine(outDir, ".report.html.partial"), "/dev/full");
            output.WriteLine("mount refused: the report is written through a link to /dev/full");
        }
        try
        {
            var (status, _, stderr) = CliProcess.Run("audit", "--model", DemoCommand.FindModel("fruit-cue.onnx"), "--data", manifest, "--out", outDir);

            Assert.True(status == 2, $"status {status}: {stderr}");
            Assert.Contains("the disk is full", stderr, StringComparison.Ordinal);
            Assert.Contains("--out", stderr, StringComparison.Ordinal);
            Assert.DoesNotContain("   at ", stderr, StringComparison.Ordinal);
            Assert.Single(stderr.Split('\n', StringSplitOptions.RemoveEmptyEntries), l => l.StartsWith("error:", StringComparison.Ordinal));
            var left = Directory.GetFileSystemEntries(outDir, "*", SearchOption.AllDirectories).Select(Path.GetFileName).ToList();
            Assert.True(left.Count == 0, "left in --out: " + string.Join(", ", left));
        }
        finally
        {
            if (mounted) FullDisk.Unmount(outDir);
        }
    }

    [Fact]
    public void DiskFull_WritesThatPreallocateOnAFullDisk_AreRecognised()
    {
        var dir = CliProcess.TempDir("prealloc");
        var mounted = FullDisk.TryMount(dir, "16k");
        output.WriteLine(mounted ? "a 16 KiB tmpfs" : "mount refused: /dev/full");
        try
        {
            var target = mounted ? Path.Combine(dir, "big.txt") : "/dev/full";
            var e = Assert.ThrowsAny<IOException>(() => File.WriteAllText(target, new string('x', 100_000)));
            Assert.True(Core.DiskFull.Is(e), $"not recognised: 0x{e.HResult:x8} {e.Message}");
            Assert.False(Core.DiskFull.Is(new IOException("some other failure")));
            Assert.False(Core.DiskFull.Is(new FileNotFoundException("gone")));
        }
        finally
        {
            if (mounted) FullDisk.Unmount(dir);
        }
    }
}
