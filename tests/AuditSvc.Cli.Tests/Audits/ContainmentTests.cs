using System.Diagnostics;
using System.Text.Json.Nodes;
using AuditSvc.Cli.Commands;
using AuditSvc.Cli.Demo;
using AuditSvc.Compute.ImageSets;

namespace AuditSvc.Cli.Tests.Audits;

/// <summary>
/// The command line reads a user's own files, but a manifest's rows stay inside its folder unless the user names a
/// wider root with --images-root; every way out is refused with the one answer, devices and FIFOs everywhere.
/// One audit per manifest; each escape kind is its own row and its own test case.
/// </summary>
public sealed class ContainmentFixture
{
    public ContainmentFixture()
    {
        Dir = CliProcess.TempDir("contain");
        Outside = CliProcess.TempDir("contain-out");
        var set = Path.Combine(Dir, "set");
        var manifest = DemoSetGenerator.Write(set, new DemoSetOptions(40, DemoCommand.DemoAgreement, 7));
        File.Copy(Path.Combine(set, "images", "00001.png"), Path.Combine(Outside, "secret.png"));
        File.CreateSymbolicLink(Path.Combine(set, "images", "link-out.png"), Path.Combine(Outside, "secret.png"));
        File.CreateSymbolicLink(Path.Combine(set, "linked-folder"), Outside);
        using (var mk = Process.Start(new ProcessStartInfo("mkfifo", Path.Combine(set, "images", "pipe.png")) { UseShellExecute = false })!) mk.WaitForExit();
        var otherRel = "../../" + Path.GetFileName(Outside);
        var extra = new Dictionary<string, string>
        {
            ["dotdot"] = $"{otherRel}/secret.png",
            ["dotdot-missing"] = $"{otherRel}/missing.png",
            ["absolute"] = Path.Combine(Outside, "secret.png"),
            ["absolute-missing"] = Path.Combine(Outside, "missing.png"),
            ["link-file"] = "images/link-out.png",
            ["link-folder"] = "linked-folder/secret.png",
            ["device"] = "/dev/zero",
            ["fifo"] = "images/pipe.png",
        };
        var lines = File.ReadAllLines(manifest).ToList();
        var template = lines[1].Split(',');
        foreach (var (kind, path) in extra)
        {
            Rows[kind] = lines.Count;
            lines.Add(string.Join(',', [path, .. template[1..]]));
        }
        File.WriteAllLines(manifest, lines);
        var (status, stdout, stderr) = CliProcess.Run("audit", "--model", DemoCommand.FindModel("fruit-cue.onnx"), "--data", manifest, "--out", Path.Combine(Dir, "out"));
        Status = status;
        Stdout = stdout + stderr;
        Problems = Read(Path.Combine(Dir, "out", "audit.json"));

        // The same set with --images-root naming the outside folder: its absolute row is read, the rest still refused.
        var (status2, _, stderr2) = CliProcess.Run("audit", "--model", DemoCommand.FindModel("fruit-cue.onnx"), "--data", manifest,
            "--images-root", Outside, "--out", Path.Combine(Dir, "out-root"));
        Assert.True(status2 is 0 or 1, stderr2);
        ProblemsWithRoot = Read(Path.Combine(Dir, "out-root", "audit.json"));
    }

    private static Dictionary<int, string> Read(string auditJson) =>
        JsonNode.Parse(File.ReadAllText(auditJson))!["image_set"]!["problems"]!.AsArray()
            .Where(p => p!["row"] is not null).ToDictionary(p => (int)p!["row"]!, p => (string)p!["reason"]!);

    public string Dir { get; }
    public string Outside { get; }
    public int Status { get; }
    public string Stdout { get; }
    public Dictionary<string, int> Rows { get; } = [];
    public Dictionary<int, string> Problems { get; }
    public Dictionary<int, string> ProblemsWithRoot { get; }
}

public class ContainmentTests(ContainmentFixture f) : IClassFixture<ContainmentFixture>
{
    [Theory]
    [InlineData("dotdot")]
    [InlineData("dotdot-missing")]
    [InlineData("absolute")]
    [InlineData("absolute-missing")]
    [InlineData("link-file")]
    [InlineData("link-folder")]
    [InlineData("device")]
    public void Audit_EscapingRow_IsRefusedWithTheOneAnswer(string kind)
    {
        Assert.True(f.Status is 0 or 1, f.Stdout);
        Assert.Equal(PathContainment.Refused, f.Problems[f.Rows[kind]]);
    }

    [Fact]
    public void Audit_FifoRow_IsRefusedNotWaitedOn()
    {
        Assert.Contains("not a regular file", f.Problems[f.Rows["fifo"]]);
        Assert.Contains("not a regular file", f.ProblemsWithRoot[f.Rows["fifo"]]);
    }

    [Fact]
    public void Audit_RefusedRows_PointAtImagesRoot()
    {
        Assert.Contains("--images-root", f.Stdout);
    }

    [Fact]
    public void Audit_WithImagesRoot_ReadsAbsoluteRowsUnderItOnly()
    {
        // The first row reaching the outside file is read; the others reach the same file and are duplicates of it.
        Assert.False(f.ProblemsWithRoot.ContainsKey(f.Rows["dotdot"]));
        Assert.Contains("duplicate path", f.ProblemsWithRoot[f.Rows["absolute"]]);
        Assert.Contains("duplicate path", f.ProblemsWithRoot[f.Rows["link-file"]]);
        Assert.Contains("duplicate path", f.ProblemsWithRoot[f.Rows["link-folder"]]);
        // The outside file is now readable, so a missing one there is "file not found", as inside the set.
        Assert.Equal("file not found", f.ProblemsWithRoot[f.Rows["dotdot-missing"]]);
        Assert.Equal(PathContainment.Refused, f.ProblemsWithRoot[f.Rows["device"]]);
    }

    [Fact]
    public void Audit_ImagesRootThatIsMissing_ExitsTwo()
    {
        var (status, _, stderr) = CliProcess.Run("audit", "--model", DemoCommand.FindModel("fruit-cue.onnx"), "--data",
            Path.Combine(f.Dir, "set", "manifest.csv"), "--images-root", "/no/such/root", "--out", Path.Combine(f.Dir, "out-missing"));
        Assert.Equal(2, status);
        Assert.Contains("/no/such/root", stderr);
    }
}
