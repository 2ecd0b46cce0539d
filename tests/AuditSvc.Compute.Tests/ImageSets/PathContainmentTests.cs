using AuditSvc.Compute.ImageSets;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.ImageSets;

/// <summary>
/// One test per way out of a set's folder: each is refused with the one answer, whether or not the file
/// outside exists; an images root named by the user widens what may be read, and only that.
/// </summary>
public class PathContainmentTests
{
    private static readonly string[] Classes = ContainmentFiles.Classes;

    private static string NewDir(string name) => ContainmentFiles.NewDir("escape", name);

    private static void Png(string path) => ContainmentFiles.Png(path);

    /// <summary>A set with one good row and the escaping rows; returns each row's reason (row 1 is the good one).</summary>
    private static (AuditSvc.Core.ImageSets.ItemTable Table, Dictionary<int, string> Reasons) Intake(string dir, IEnumerable<string> rows, string? imagesRoot = null)
    {
        Png(Path.Combine(dir, "good.png"));
        File.WriteAllLines(Path.Combine(dir, "manifest.csv"), ["image,label", "good.png,cat", .. rows.Select(r => $"{r},dog")]);
        var t = SetIntake.Read(Path.Combine(dir, "manifest.csv"), Classes, dir, imagesRoot);
        return (t, t.Report.Problems.Where(p => p.Row is not null).ToDictionary(p => p.Row!.Value, p => p.Reason));
    }

    public static TheoryData<string> EscapeKinds => new()
    {
        "dotdot-existing", "dotdot-missing", "absolute-existing", "absolute-missing", "link-file-out", "link-dangling-out",
        "link-folder-out", "link-chain-out", "link-loop", "relative-link-up", "absolute-into-set",
    };

    [Theory]
    [MemberData(nameof(EscapeKinds))]
    public void Read_EscapeKind_IsRefusedWithTheOneAnswer(string kind)
    {
        var outside = NewDir("outside");
        Png(Path.Combine(outside, "secret.png"));
        var dir = NewDir("set");
        var other = "../" + Path.GetFileName(outside);
        string row = kind switch
        {
            "dotdot-existing" => $"{other}/secret.png",
            "dotdot-missing" => $"{other}/missing.png",
            "absolute-existing" => Path.Combine(outside, "secret.png"),
            "absolute-missing" => Path.Combine(outside, "missing.png"),
            "link-file-out" => Link(dir, "l.png", Path.Combine(outside, "secret.png")),
            "link-dangling-out" => Link(dir, "l.png", Path.Combine(outside, "missing.png")),
            "link-folder-out" => Link(dir, "sub", outside) + "/secret.png",
            "link-chain-out" => Link(dir, "a.png", Path.Combine(dir, Link(dir, "b.png", Path.Combine(outside, "secret.png")))),
            "link-loop" => Link(dir, "x.png", Path.Combine(dir, Link(dir, "y.png", Path.Combine(dir, "x.png")))),
            "relative-link-up" => Link(dir, "up", "..") + "/" + Path.GetFileName(outside) + "/secret.png",
            // Without an images root an absolute row is refused even when it names a file of the set.
            "absolute-into-set" => Path.Combine(dir, "good.png"),
            _ => throw new ArgumentOutOfRangeException(nameof(kind)),
        };
        var (t, reasons) = Intake(dir, [row]);
        Assert.Single(t.Items);
        Assert.Equal(PathContainment.Refused, reasons[2]);
    }

    private static string Link(string dir, string name, string target)
    {
        var p = Path.Combine(dir, name);
        if (File.Exists(p) || Directory.Exists(p)) File.Delete(p);
        File.CreateSymbolicLink(p, target);
        return name;
    }

    [Fact]
    public void Read_LinksThatStayInside_AreReadAndCountedOnce()
    {
        var dir = NewDir("inside-links");
        Png(Path.Combine(dir, "imgs", "b.png"));
        Link(dir, "alias", Path.Combine(dir, "imgs"));
        Link(dir, "b-link.png", "imgs/b.png");
        var (t, reasons) = Intake(dir, ["imgs/b.png", "alias/b.png", "b-link.png", "./imgs/../imgs/b.png"]);
        Assert.Equal(2, t.Items.Count);
        Assert.All([3, 4, 5], row => Assert.Contains("duplicate path", reasons[row]));
    }

    [Fact]
    public void Read_SetReachedThroughALink_IsReadNormally()
    {
        var real = NewDir("real-set");
        var via = Path.Combine(NewDir("via"), "set");
        File.CreateSymbolicLink(via, real);
        var (t, reasons) = Intake(via, ["sub/../good.png"]);
        Assert.Single(t.Items);
        Assert.Contains("duplicate path", reasons[2]);
    }

    [Fact]
    public void Read_WithImagesRoot_AbsoluteRowsUnderItAreRead()
    {
        var images = NewDir("images-root");
        Png(Path.Combine(images, "far", "c.png"));
        var outside = NewDir("not-allowed");
        Png(Path.Combine(outside, "secret.png"));
        Link(images, "out", outside);
        var dir = NewDir("manifest-only");
        var (t, reasons) = Intake(dir, [Path.Combine(images, "far", "c.png"), Path.Combine(outside, "secret.png"), Path.Combine(images, "out", "secret.png")], images);
        Assert.Equal(2, t.Items.Count);
        Assert.Equal(PathContainment.Refused, reasons[3]);
        Assert.Equal(PathContainment.Refused, reasons[4]);
    }

    [Fact]
    public void Read_DeviceUnderAnImagesRoot_IsRefusedNotRead()
    {
        var dir = NewDir("devroot");
        var (t, reasons) = Intake(dir, ["/dev/zero", "/dev/urandom", "/dev/stdin"], "/dev");
        Assert.Single(t.Items);
        Assert.All([2, 3, 4], row => Assert.Contains("not a regular file", reasons[row]));
    }

    [Fact]
    public void Read_FolderTreeWithALinkLoop_ListsEachImageOnce()
    {
        var dir = NewDir("tree-loop");
        for (int i = 0; i < 3; i++) Png(Path.Combine(dir, "cat", $"{i}.png"));
        Png(Path.Combine(dir, "dog", "d.png"));
        File.CreateSymbolicLink(Path.Combine(dir, "cat", "again"), Path.Combine(dir, "cat"));
        var t = SetIntake.Read(dir, Classes, dir);
        Assert.Equal(4, t.Items.Count);
        Assert.Equal(4, t.Report.RowsRead);
    }

    [Fact]
    public void RealPath_FollowsLinksOnTheWay()
    {
        var dir = NewDir("real");
        Directory.CreateDirectory(Path.Combine(dir, "t"));
        Link(dir, "l", "t");
        Assert.Equal(Path.Combine(PathContainment.RealPath(dir)!, "t", "f.png"), PathContainment.RealPath(Path.Combine(dir, "l", "f.png")));
        Assert.Null(PathContainment.RealPath(Path.Combine(dir, Link(dir, "p", Path.Combine(dir, Link(dir, "q", Path.Combine(dir, "p")))))));
    }
}
