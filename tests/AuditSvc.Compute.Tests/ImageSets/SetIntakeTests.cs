using System.IO.Compression;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Core;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.ImageSets;

public class SetIntakeTests
{
    private static readonly string[] Classes = ["cat", "dog"];

    private static string NewDir()
    {
        var d = Path.Combine(Path.GetTempPath(), "auditsvc-intake-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(d);
        return d;
    }

    private static void Png(string path, byte shade = 100)
    {
        Directory.CreateDirectory(Path.GetDirectoryName(path)!);
        using var img = new Image<Rgb24>(8, 8, new Rgb24(shade, shade, shade));
        img.SaveAsPng(path);
    }

    [Fact]
    public void Read_Manifest_AttributesCodedAndEmptyCellsMissing()
    {
        var dir = NewDir();
        Png(Path.Combine(dir, "a.png"));
        Png(Path.Combine(dir, "b.png"));
        Png(Path.Combine(dir, "c.png"));
        File.WriteAllText(Path.Combine(dir, "manifest.csv"), "image,label,site\na.png,cat,north\nb.png,dog,\nc.png,dog,south\n");
        var t = SetIntake.Read(Path.Combine(dir, "manifest.csv"), Classes, dir);
        Assert.Equal(3, t.Items.Count);
        Assert.Equal(["north", "south"], t.Attributes[0].Values);
        Assert.Equal(-1, t.Items[1].AttributeValues[0]);
        Assert.Equal(1, t.Items[2].Label);
        Assert.Equal(64, t.Items[0].Sha256.Length);
        Assert.Equal(Convert.ToHexStringLower(System.Security.Cryptography.SHA256.HashData(File.ReadAllBytes(Path.Combine(dir, "a.png")))), t.Items[0].Sha256);
        Assert.Equal(Path.GetFullPath(Path.Combine(dir, "c.png")), t.Items[2].Path);
    }

    [Fact]
    public void Read_NumericColumn_IsBinnedIntoQuartiles()
    {
        var dir = NewDir();
        var lines = new List<string> { "image,label,weight" };
        for (int i = 0; i < 40; i++)
        {
            Png(Path.Combine(dir, $"{i}.png"));
            lines.Add($"{i}.png,{Classes[i % 2]},{i * 1.5}");
        }
        File.WriteAllLines(Path.Combine(dir, "manifest.csv"), lines);
        var t = SetIntake.Read(dir, Classes, dir);
        Assert.True(t.Attributes[0].Numeric);
        Assert.Equal(4, t.Attributes[0].Values.Count);
        Assert.Equal(0, t.Items[0].AttributeValues[0]);
        Assert.Equal(3, t.Items[39].AttributeValues[0]);
    }

    [Fact]
    public void Read_ClassFolders_WithAttributeFile()
    {
        var dir = NewDir();
        Png(Path.Combine(dir, "cat", "1.png"));
        Png(Path.Combine(dir, "dog", "2.png"));
        File.WriteAllText(Path.Combine(dir, "attributes.csv"), "image,camera\ncat/1.png,x\n");
        var t = SetIntake.Read(dir, Classes, dir);
        Assert.Equal(2, t.Items.Count);
        Assert.Equal("camera", t.Attributes[0].Name);
        Assert.Equal(0, t.Items.Single(i => i.RelativePath == "cat/1.png").AttributeValues[0]);
        Assert.Equal(-1, t.Items.Single(i => i.RelativePath == "dog/2.png").AttributeValues[0]);
    }

    [Fact]
    public void Read_Zip_IsUnpackedAndRead()
    {
        var src = NewDir();
        Png(Path.Combine(src, "cat", "1.png"));
        Png(Path.Combine(src, "dog", "2.png"));
        var zip = Path.Combine(NewDir(), "set.zip");
        ZipFile.CreateFromDirectory(src, zip);
        var t = SetIntake.Read(zip, Classes, NewDir());
        Assert.Equal(2, t.Items.Count);
    }

    [Fact]
    public void Read_ZipEntryOutsideTheArchive_IsRefused()
    {
        var zip = Path.Combine(NewDir(), "evil.zip");
        using (var archive = ZipFile.Open(zip, ZipArchiveMode.Create))
        {
            using var w = new StreamWriter(archive.CreateEntry("../escape.txt").Open());
            w.Write("x");
        }
        var e = Assert.Throws<AuditInputException>(() => SetIntake.Read(zip, Classes, NewDir()));
        Assert.Contains("outside the archive", e.Message);
    }

    [Fact]
    public void Read_LabelNamesWithoutClassNames_AsksForLabels()
    {
        var dir = NewDir();
        Png(Path.Combine(dir, "a.png"));
        File.WriteAllText(Path.Combine(dir, "manifest.csv"), "image,label\na.png,cat\n");
        var e = Assert.Throws<AuditInputException>(() => SetIntake.Read(dir, null, dir));
        Assert.Contains("--labels", e.Message);
    }

    [Fact]
    public void Read_IntegerLabelsWithoutClassNames_AreClassIndices()
    {
        var dir = NewDir();
        Png(Path.Combine(dir, "a.png"));
        Png(Path.Combine(dir, "b.png"));
        File.WriteAllText(Path.Combine(dir, "manifest.csv"), "image,label\na.png,0\nb.png,2\n");
        var t = SetIntake.Read(dir, null, dir);
        Assert.Equal(["0", "1", "2"], t.Labels);
        Assert.Equal(2, t.Items[1].Label);
    }
}

public class AttributeBinningTests
{
    [Fact]
    public void Build_IdLikeColumn_IsLeftOutWithAReason()
    {
        var cells = Enumerable.Range(0, 80).Select(i => new string?[] { $"id-{i}", i % 2 == 0 ? "a" : "b" }).ToList();
        var columns = AttributeBinning.Build(["patient", "site"], cells, out var codes, out var skipped);
        var column = Assert.Single(columns);
        Assert.Equal("site", column.Name);
        Assert.Single(codes[0]);
        var (name, reason) = Assert.Single(skipped);
        Assert.Equal("patient", name);
        Assert.Contains("80 distinct values", reason);
    }

    [Fact]
    public void QuantileEdges_HeavyTies_MergeEdgesSoNoBinIsEmptyByConstruction()
    {
        var edges = AttributeBinning.QuantileEdges([0, 0, 0, 0, 0, 0, 0, 1, 2, 3]);
        Assert.Equal(edges.Distinct().Count(), edges.Length);
        Assert.Equal(0, AttributeBinning.BinOf(edges, 0));
    }
}
