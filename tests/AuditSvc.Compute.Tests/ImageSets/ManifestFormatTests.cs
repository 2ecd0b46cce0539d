using System.Text;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Core;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.ImageSets;

/// <summary>Manifests as people's tools write them, and manifests made to exhaust intake.</summary>
public class ManifestFormatTests
{
    private static readonly string[] Classes = ["cat", "dog"];

    private static string SetWithImages(int count = 4)
    {
        var d = Path.Combine(Path.GetTempPath(), "auditsvc-manifest-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(d);
        for (int i = 0; i < count; i++)
        {
            using var img = new Image<Rgb24>(4, 4, new Rgb24((byte)(i * 40), 9, 9));
            img.SaveAsPng(Path.Combine(d, $"{i}.png"));
        }
        return d;
    }

    private static AuditSvc.Core.ImageSets.ItemTable Read(string dir, string text, Encoding? encoding = null)
    {
        File.WriteAllText(Path.Combine(dir, "manifest.csv"), text, encoding ?? new UTF8Encoding(false));
        return SetIntake.Read(Path.Combine(dir, "manifest.csv"), Classes, dir);
    }

    [Fact]
    public void Read_ByteOrderMark_IsSkipped()
    {
        var t = Read(SetWithImages(), "image,label,site\n0.png,cat,a\n1.png,dog,b\n", new UTF8Encoding(true));
        Assert.Equal(2, t.Items.Count);
        Assert.Equal("site", Assert.Single(t.Attributes).Name);
    }

    [Theory]
    [InlineData(";")]
    [InlineData("\t")]
    [InlineData("|")]
    public void Read_OtherSeparators_AreDetected(string sep)
    {
        var t = Read(SetWithImages(), $"image{sep}label{sep}site\n0.png{sep}cat{sep}a,1\n1.png{sep}dog{sep}b,2\n2.png{sep}cat{sep}a,1\n");
        Assert.Equal(3, t.Items.Count);
        Assert.Equal("site", Assert.Single(t.Attributes).Name);
    }

    [Fact]
    public void Read_QuotedLineBreaksAndSeparators_StayInTheirCell()
    {
        var t = Read(SetWithImages(), "image,label,note\n0.png,cat,\"two\nlines, one cell\"\n1.png,dog,plain\n2.png,cat,\"say \"\"hi\"\"\"\n");
        Assert.Equal(3, t.Items.Count);
        Assert.DoesNotContain(t.Report.Problems, p => p.Row is not null);
        Assert.Equal([1, 2, 3], t.Items.Select(i => i.Row));
    }

    [Fact]
    public void Read_HundredThousandColumns_IsRefusedNamingTheLimit()
    {
        var header = "image,label," + string.Join(',', Enumerable.Range(0, 100_000).Select(i => $"c{i}"));
        var dir = SetWithImages();
        var e = Assert.Throws<AuditInputException>(() => Read(dir, header + "\n0.png,cat\n"));
        Assert.Contains($"100002 columns, more than the limit of {IntakeLimits.MaxColumns}", e.Message, StringComparison.Ordinal);
        Assert.Contains("manifest.csv", e.Subject, StringComparison.Ordinal);
    }

    [Fact]
    public void Read_HugeCell_IsRefusedAsUnreadable()
    {
        var dir = SetWithImages();
        var e = Assert.Throws<AuditInputException>(() => Read(dir, $"image,label,note\n0.png,cat,{new string('x', IntakeLimits.MaxCellChars + 10)}\n"));
        Assert.Contains("not a readable CSV", e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Read_ManyBadRows_ListsTheFirstThousandAndCountsTheRest()
    {
        var dir = SetWithImages(1);
        var rows = Enumerable.Range(0, 1500).Select(i => $"missing-{i}.png,cat").Concat(Enumerable.Range(0, 30).Select(i => $"other-{i}.png,cow"));
        var t = Read(dir, "image,label\n0.png,cat\n" + string.Join('\n', rows) + "\n");
        var listed = t.Report.Problems.Where(p => p.Row is not null).ToList();
        Assert.Equal(IntakeLimits.MaxProblemsListed, listed.Count);
        var summary = t.Report.Problems.Where(p => p.Row is null).Select(p => p.Reason).ToList();
        Assert.Contains("500 more rows not listed: file not found", summary);
        Assert.Contains("30 more rows not listed: unknown label", summary);
        Assert.Equal(1531, t.Report.RowsRead);
    }
}
