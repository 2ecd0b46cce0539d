using System.IO.Compression;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Core;

namespace AuditSvc.Compute.Tests.ImageSets;

/// <summary>
/// The shared extractor refuses every kind of hostile archive with the entry named, writes nothing outside its
/// target, and leaves no folder behind when it refuses.
/// </summary>
public class ZipExtractorTests
{
    private static (string Parent, string Target, string Zip) Place(string kind)
    {
        var parent = Path.Combine(Path.GetTempPath(), "auditsvc-zip-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(parent);
        var zip = Path.Combine(parent, "set.zip");
        File.WriteAllBytes(zip, HostileZips.Build(kind));
        return (parent, Path.Combine(parent, "out"), zip);
    }

    [Theory]
    [InlineData("dotdot", "leads outside")]
    [InlineData("dotdot-inner", "leads outside")]
    [InlineData("absolute", "leads outside")]
    [InlineData("backslash", "leads outside")]
    [InlineData("drive", "leads outside")]
    [InlineData("symlink", "link or a special file")]
    [InlineData("fifo", "link or a special file")]
    [InlineData("duplicate", "appears twice")]
    [InlineData("file-folder", "both a file and a folder")]
    [InlineData("folder-file", "both a file and a folder")]
    [InlineData("empty", "holds no files")]
    [InlineData("only-folders", "holds no files")]
    [InlineData("ratio-bomb", "archive bomb")]
    [InlineData("bzip2", "only stored and deflate")]
    [InlineData("lzma", "only stored and deflate")]
    public void Extract_HostileArchive_IsRefusedAndLeavesNothing(string kind, string expected)
    {
        var (parent, target, zip) = Place(kind);
        var e = Assert.Throws<AuditInputException>(() => ZipExtractor.Extract(zip, target, new ZipLimits(), "set.zip"));
        Assert.Contains(expected, e.Message, StringComparison.Ordinal);
        Assert.StartsWith("set.zip", e.Subject, StringComparison.Ordinal);
        Assert.False(Directory.Exists(target), "the refused archive's folder stayed");
        Assert.Equal(["set.zip"], Directory.GetFileSystemEntries(parent).Select(Path.GetFileName));
        Assert.False(File.Exists(Path.Combine(Path.GetTempPath(), "evil.png")));
    }

    [Fact]
    public void Extract_GoodArchive_WritesItsFiles()
    {
        var (_, target, zip) = Place("good");
        Assert.Equal(2, ZipExtractor.Extract(zip, target, new ZipLimits(), "set.zip"));
        Assert.True(File.Exists(Path.Combine(target, "cat", "a.png")));
    }

    [Fact]
    public void Extract_MoreEntriesThanTheLimit_IsRefused()
    {
        var (_, target, zip) = Place("good");
        var e = Assert.Throws<AuditInputException>(() => ZipExtractor.Extract(zip, target, new ZipLimits(MaxEntries: 1), "set.zip"));
        Assert.Contains("more than the limit of 1", e.Message, StringComparison.Ordinal);
        Assert.False(Directory.Exists(target));
    }

    [Fact]
    public void Extract_MoreBytesThanTheTotalLimit_IsRefused()
    {
        var (_, target, zip) = Place("good");
        var e = Assert.Throws<AuditInputException>(() => ZipExtractor.Extract(zip, target, new ZipLimits(MaxTotalBytes: 20), "set.zip"));
        Assert.Contains("limit of 20 bytes", e.Message, StringComparison.Ordinal);
        Assert.False(Directory.Exists(target));
    }

    [Fact]
    public void Extract_FileLargerThanThePerFileLimit_IsRefused()
    {
        var (_, target, zip) = Place("good");
        var e = Assert.Throws<AuditInputException>(() => ZipExtractor.Extract(zip, target, new ZipLimits(MaxEntryBytes: 4), "set.zip"));
        Assert.Contains("per file", e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Extract_NotAZip_IsRefused()
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-zip-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(dir);
        File.WriteAllText(Path.Combine(dir, "x.zip"), "plain text");
        var e = Assert.Throws<AuditInputException>(() => ZipExtractor.Extract(Path.Combine(dir, "x.zip"), Path.Combine(dir, "out"), new ZipLimits(), "x.zip"));
        Assert.Contains("not a readable .zip", e.Message, StringComparison.Ordinal);
        Assert.False(Directory.Exists(Path.Combine(dir, "out")));
    }
}
