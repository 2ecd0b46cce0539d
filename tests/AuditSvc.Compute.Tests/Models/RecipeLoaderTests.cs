using AuditSvc.Compute.Models;
using AuditSvc.Core.Models;

namespace AuditSvc.Compute.Tests.Models;

public class RecipeLoaderTests
{
    private static readonly ImageInput Rgb224 = new("image", 1, 3, 224, 224);

    [Fact]
    public void Resolve_NoFileNoOptions_UsesImageNetStretchRgbAndModelSize()
    {
        var r = RecipeLoader.Resolve(Rgb224, null, null, "m.recipe.json");
        // ImageNet mean/std on 0..1 pixels: common practice.
        Assert.Equal(InputRecipe.Default(224, 224) with { Mean = r.Mean, Std = r.Std }, r);
        Assert.Equal([0.485f, 0.456f, 0.406f], r.Mean);
        Assert.Equal([0.229f, 0.224f, 0.225f], r.Std);
    }

    [Fact]
    public void Resolve_FileThenOptions_OptionsWin()
    {
        using var dir = new TempDir();
        string path = dir.File("m.recipe.json", """
            { "resize": "shorter-side-center-crop", "pixel_scale": 255, "mean": [1, 2, 3], "std": [4, 5, 6],
              "channel_order": "bgr", "class_names": ["a", "b"] }
            """);
        var file = RecipeLoader.ReadFile(path);
        var r = RecipeLoader.Resolve(Rgb224, file, new RecipeOverrides(Mean: [0, 0, 0], ClassNames: ["x", "y"]), path);
        Assert.Equal(ResizeMode.ShorterSideCenterCrop, r.Resize);
        Assert.Equal(255f, r.PixelScale);
        Assert.Equal([0f, 0, 0], r.Mean);
        Assert.Equal([4f, 5, 6], r.Std);
        Assert.Equal(ChannelOrder.Bgr, r.Order);
        Assert.Equal(["x", "y"], r.ClassNames);
    }

    [Fact]
    public void Resolve_GreyInput_UsesOneChannelMeanAndStd()
    {
        var r = RecipeLoader.Resolve(new ImageInput("image", null, 1, 28, 28), null, null, "m.recipe.json");
        Assert.Single(r.Mean);
        Assert.Single(r.Std);
    }

    [Fact]
    public void RecipePathFor_ModelFile_SitsBesideWithoutOnnxExtension()
    {
        Assert.Equal("/data/models/net.v2.recipe.json", RecipeLoader.RecipePathFor("/data/models/net.v2.onnx"));
    }
}
