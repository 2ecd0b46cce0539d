namespace AuditSvc.Core.Models;

/// <summary>How an image becomes the model's input tensor.</summary>
public enum ResizeMode
{
    /// <summary>Scale the whole image to the input size (default: corners and borders stay visible).</summary>
    Stretch,
    /// <summary>Resize the shorter side to the input size, then take the centre crop.</summary>
    ShorterSideCenterCrop,
}

/// <summary>Channel order of the input tensor.</summary>
public enum ChannelOrder
{
    Rgb,
    Bgr,
}

/// <summary>
/// The input recipe of a model: size, resize mode, pixel scaling, per-channel mean/std, channel order,
/// class names in output order. Pixels are scaled to 0..PixelScale (1 by default) before mean/std.
/// </summary>
public sealed record InputRecipe(
    int Width,
    int Height,
    ResizeMode Resize,
    float PixelScale,
    float[] Mean,
    float[] Std,
    ChannelOrder Order,
    IReadOnlyList<string>? ClassNames)
{
    /// <summary>ImageNet mean on 0..1 pixels (common practice).</summary>
    public static readonly float[] ImageNetMean = [0.485f, 0.456f, 0.406f];

    /// <summary>ImageNet standard deviation on 0..1 pixels (common practice).</summary>
    public static readonly float[] ImageNetStd = [0.229f, 0.224f, 0.225f];

    public static InputRecipe Default(int width, int height) =>
        new(width, height, ResizeMode.Stretch, 1f, ImageNetMean, ImageNetStd, ChannelOrder.Rgb, null);
}
