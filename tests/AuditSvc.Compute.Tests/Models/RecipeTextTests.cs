using AuditSvc.Compute.Models;
using AuditSvc.Core.Models;

namespace AuditSvc.Compute.Tests.Models;

public sealed class RecipeTextTests
{
    [Fact]
    public void Write_ThenTryRead_GivesTheSameRecipeInTheFilesWords()
    {
        var recipe = new InputRecipe(224, 160, ResizeMode.ShorterSideCenterCrop, 255f, [0.485f, 0.456f, 0.406f], [0.229f, 0.224f, 0.225f],
            ChannelOrder.Bgr, ["cat", "dog"]);

        var text = RecipeText.Write(recipe);
        var back = RecipeText.TryRead(text)!;

        Assert.Contains("\"pixel_scale\":255", text, StringComparison.Ordinal);
        Assert.Contains("\"channel_order\":\"bgr\"", text, StringComparison.Ordinal);
        Assert.Contains("\"resize\":\"shorter-side-center-crop\"", text, StringComparison.Ordinal);
        Assert.Contains("\"mean\":[0.485,0.456,0.406]", text, StringComparison.Ordinal);
        Assert.Equal((recipe.Width, recipe.Height, recipe.Resize, recipe.PixelScale, recipe.Order), (back.Width, back.Height, back.Resize, back.PixelScale, back.Order));
        Assert.Equal(recipe.Mean, back.Mean);
        Assert.Equal(recipe.Std, back.Std);
        Assert.Equal(recipe.ClassNames, back.ClassNames);
    }

    [Theory]
    [InlineData("{\"width\":64,\"height\":64,\"resize\":\"stretch\",\"pixelScale\":1}")] // the API's earlier camelCase
    [InlineData("not json")]
    [InlineData("[]")]
    public void TryRead_OtherText_IsNull(string text) => Assert.Null(RecipeText.TryRead(text));
}
