using System.Diagnostics;
using AuditSvc.Compute.ImageSets;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.ImageSets;

/// <summary>
/// Manifest rows name files inside the set's folder only, and only regular files of bounded size are read: a row must
/// not reach another set's images, hang intake on a FIFO or fill memory from a device.
/// </summary>
public class SetIntakeContainmentTests
{
    private static readonly string[] Classes = ContainmentFiles.Classes;

    private static string NewDir(string name) => ContainmentFiles.NewDir("contain", name);

    private static void Png(string path) => ContainmentFiles.Png(path);

    [Fact]
    public void Read_RowsLeavingTheSetsFolder_AreRefusedWithoutTouchingTheFile()
    {
        var outside = NewDir("other-team");
        Png(Path.Combine(outside, "secret.png"));
        var dir = NewDir("set");
        Png(Path.Combine(dir, "a.png"));
        File.CreateSymbolicLink(Path.Combine(dir, "link.png"), Path.Combine(outside, "secret.png"));
        var otherName = Path.GetFileName(outside);
        File.WriteAllText(Path.Combine(dir, "manifest.csv"),
            $"image,label\na.png,cat\n../{otherName}/secret.png,dog\n{Path.Combine(outside, "secret.png")},dog\n../{otherName}/missing.png,dog\nlink.png,dog\n");
        var t = SetIntake.Read(Path.Combine(dir, "manifest.csv"), Classes, dir);
        Assert.Single(t.Items);
        var reasons = t.Report.Problems.ToDictionary(p => p.Row!.Value, p => p.Reason);
        // Rows 2–5: the same answer whether the outside file exists or not, so nothing is learnt about it.
        Assert.All([2, 3, 4, 5], row => Assert.Equal(PathContainment.Refused, reasons[row]));
    }

    [Fact]
    public void Read_FifoAndDeviceRows_AreRefusedNotReadNorWaitedOn()
    {
        var dir = NewDir("special");
        Png(Path.Combine(dir, "a.png"));
        var fifo = Path.Combine(dir, "pipe.png");
        using (var mk = Process.Start(new ProcessStartInfo("mkfifo", fifo) { UseShellExecute = false })!) mk.WaitForExit();
        Assert.True(File.Exists(fifo), "mkfifo did not make the FIFO");
        File.CreateSymbolicLink(Path.Combine(dir, "zero.png"), "/dev/zero");
        File.WriteAllText(Path.Combine(dir, "manifest.csv"), "image,label\na.png,cat\npipe.png,dog\nzero.png,dog\n");
        var t = SetIntake.Read(Path.Combine(dir, "manifest.csv"), Classes, dir);
        Assert.Single(t.Items);
        var reasons = t.Report.Problems.ToDictionary(p => p.Row!.Value, p => p.Reason);
        Assert.Contains("not a regular file", reasons[2]);
        // /dev/zero through a link: outside the folder, refused before any read.
        Assert.Equal(PathContainment.Refused, reasons[3]);
    }
}
