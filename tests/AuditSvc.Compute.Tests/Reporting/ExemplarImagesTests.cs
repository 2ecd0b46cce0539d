using AuditSvc.Compute.Reporting;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Models;
using SixLabors.ImageSharp;
using SixLabors.ImageSharp.PixelFormats;

namespace AuditSvc.Compute.Tests.Reporting;

public sealed class ExemplarImagesTests : IDisposable
{
    private static readonly Rgb24 Grey = new(128, 128, 128), Red = new(220, 20, 20);
    private readonly string _dir = Directory.CreateTempSubdirectory("auditsvc-exemplars-").FullName;

    public void Dispose() => Directory.Delete(_dir, true);

    /// <summary>A 128×128 grey image with a red square at 40..71: at a 64×64 input it sits at 20..35.</summary>
    private string MakeImage()
    {
        var path = Path.Combine(_dir, "square.png");
        using var image = new Image<Rgb24>(128, 128, Grey);
        for (int y = 40; y < 72; y++)
            for (int x = 40; x < 72; x++)
                image[x, y] = Red;
        image.SaveAsPng(path);
        return path;
    }

    private static Image<Rgb24> Decode(string? uri)
    {
        Assert.NotNull(uri);
        const string prefix = "data:image/png;base64,";
        Assert.StartsWith(prefix, uri, StringComparison.Ordinal);
        return Image.Load<Rgb24>(Convert.FromBase64String(uri[prefix.Length..]));
    }

    private static bool IsOutline(Rgb24 p) => p == ExemplarImages.OutlineA || p == ExemplarImages.OutlineB;

    private static Exemplar At(int item, BoxDto box) => new(item, "square.png", "a", "yes", 1f, box);

    [Fact]
    public void Crop_BoxInInputCoordinates_OutlinesTheBoxAroundTheFittedSquare()
    {
        var path = MakeImage();
        var images = new ExemplarImages(_ => path, InputRecipe.Default(64, 64));
        // Box (20,20,16,16) at input size; margin 4 px each side → crop 16..39 (24 px), enlarged 4× to 96 px.
        using var crop = Decode(images.Crop(At(0, new BoxDto(20, 20, 16, 16))));
        Assert.Equal(96, crop.Width);
        Assert.Equal(96, crop.Height);
        // The box maps to 16..79 in the crop: its edges carry the outline, two pixels thick.
        Assert.True(IsOutline(crop[16, 16]));
        Assert.True(IsOutline(crop[17, 40]));
        Assert.True(IsOutline(crop[79, 50]));
        Assert.True(IsOutline(crop[50, 78]));
        Assert.False(IsOutline(crop[18, 40]));
        // Inside the box is the red square (the fit lined it up), outside it the grey margin.
        Assert.Equal(Red, crop[48, 48]);
        Assert.Equal(Grey, crop[4, 4]);
        Assert.Equal(Grey, crop[90, 90]);
    }

    [Fact]
    public void Crop_BoxAtImageEdge_ClipsTheMargin()
    {
        var path = MakeImage();
        var images = new ExemplarImages(_ => path, InputRecipe.Default(64, 64));
        using var crop = Decode(images.Crop(At(0, new BoxDto(0, 0, 16, 16))));
        // Margin clipped on the top-left: crop 0..19 (20 px), enlarged to 96; outline starts at the corner.
        Assert.Equal(96, crop.Width);
        Assert.True(IsOutline(crop[0, 0]));
        Assert.True(IsOutline(crop[1, 30]));
    }

    [Fact]
    public void Whole_FittedImage_IsAtMostThumbnailSizeWithOutline()
    {
        var path = MakeImage();
        var images = new ExemplarImages(_ => path, InputRecipe.Default(224, 224));
        using var whole = Decode(images.Whole(At(0, new BoxDto(70, 70, 56, 56))));
        Assert.True(Math.Max(whole.Width, whole.Height) <= ExemplarImages.WholeSize);
        int o = (int)Math.Floor(70 * 128 / 224.0);
        Assert.True(IsOutline(whole[o, o]));
        Assert.Equal(Grey, whole[2, 2]);
    }

    [Fact]
    public void Crop_MissingFile_ReturnsNull()
    {
        var images = new ExemplarImages(_ => Path.Combine(_dir, "absent.png"), InputRecipe.Default(64, 64));
        Assert.Null(images.Crop(At(0, new BoxDto(0, 0, 8, 8))));
        Assert.Null(images.Whole(At(0, new BoxDto(0, 0, 8, 8))));
    }

    [Fact]
    public void Crop_NotAnImage_ReturnsNull()
    {
        var path = Path.Combine(_dir, "text.png");
        File.WriteAllText(path, "not an image");
        var images = new ExemplarImages(_ => path, InputRecipe.Default(64, 64));
        Assert.Null(images.Crop(At(0, new BoxDto(0, 0, 8, 8))));
    }

    [Fact]
    public void Crop_SameItemAndBox_IsCached()
    {
        var path = MakeImage();
        int calls = 0;
        var images = new ExemplarImages(_ => { calls++; return path; }, InputRecipe.Default(64, 64));
        var a = images.Crop(At(3, new BoxDto(20, 20, 16, 16)));
        var b = images.Crop(At(3, new BoxDto(20, 20, 16, 16)));
        Assert.Same(a, b);
        Assert.Equal(1, calls);
    }
}
