using System.Globalization;
using System.Text.Json;
using AuditSvc.Core;
using AuditSvc.Core.Models;

namespace AuditSvc.Compute.Models;

/// <summary>Explicit recipe settings (command-line options, API fields); each wins over the recipe file.</summary>
public sealed record RecipeOverrides(
    int? Width = null,
    int? Height = null,
    ResizeMode? Resize = null,
    float? PixelScale = null,
    float[]? Mean = null,
    float[]? Std = null,
    ChannelOrder? Order = null,
    IReadOnlyList<string>? ClassNames = null);

/// <summary>
/// Builds the input recipe: defaults (ImageNet mean/std on 0..1 pixels, stretch, RGB, the model's own
/// size), then <c>&lt;model&gt;.recipe.json</c> beside the model, then explicit overrides.
/// </summary>
public static class RecipeLoader
{
    /// <summary>The recipe file that belongs to a model file.</summary>
    public static string RecipePathFor(string modelPath) =>
        Path.Combine(Path.GetDirectoryName(Path.GetFullPath(modelPath)) ?? ".",
            Path.GetFileNameWithoutExtension(modelPath) + ".recipe.json");

    /// <summary>Reads the recipe file beside the model, or returns null when there is none.</summary>
    public static RecipeOverrides? ReadFile(string recipePath)
    {
        if (!File.Exists(recipePath)) return null;
        JsonDocument doc;
        try
        {
            doc = JsonDocument.Parse(File.ReadAllText(recipePath));
        }
        catch (JsonException e)
        {
            throw new AuditInputException(recipePath, $"not valid JSON ({e.Message})", e);
        }
        using (doc)
        {
            var root = doc.RootElement;
            if (root.ValueKind != JsonValueKind.Object)
                throw new AuditInputException(recipePath, "expected a JSON object with recipe fields");
            var known = new HashSet<string>(StringComparer.Ordinal)
                { "width", "height", "resize", "pixel_scale", "mean", "std", "channel_order", "class_names" };
            foreach (var p in root.EnumerateObject())
                if (!known.Contains(p.Name))
                    throw new AuditInputException(recipePath, $"unknown field '{p.Name}' (fields: {string.Join(", ", known)})");
            return new RecipeOverrides(
                Width: Int(recipePath, root, "width"),
                Height: Int(recipePath, root, "height"),
                Resize: Str(recipePath, root, "resize") switch
                {
                    null => null,
                    "stretch" => ResizeMode.Stretch,
                    "shorter-side-center-crop" => ResizeMode.ShorterSideCenterCrop,
                    var s => throw new AuditInputException(recipePath, $"field 'resize' is '{s}', expected \"stretch\" or \"shorter-side-center-crop\""),
                },
                PixelScale: Floats(recipePath, root, "pixel_scale", scalar: true)?[0],
                Mean: Floats(recipePath, root, "mean", scalar: false),
                Std: Floats(recipePath, root, "std", scalar: false),
                Order: Str(recipePath, root, "channel_order") switch
                {
                    null => null,
                    "rgb" => ChannelOrder.Rgb,
                    "bgr" => ChannelOrder.Bgr,
                    var s => throw new AuditInputException(recipePath, $"field 'channel_order' is '{s}', expected \"rgb\" or \"bgr\""),
                },
                ClassNames: ClassNames(recipePath, root));
        }
    }

    /// <summary>Layers defaults, the file and the overrides, and checks the result against the model's input.</summary>
    /// <param name="graphNormalises">The graph normalises its own input: with no mean/std given, the default is then
    /// mean 0, std 1 (pixels 0..1 go in as they are) instead of ImageNet's, so nothing is normalised twice.</param>
    public static InputRecipe Resolve(ImageInput input, RecipeOverrides? file, RecipeOverrides? explicitOptions, string recipePath,
        bool graphNormalises = false)
    {
        ArgumentNullException.ThrowIfNull(input);
        string Source(Func<RecipeOverrides, object?> pick) =>
            explicitOptions is not null && pick(explicitOptions) is not null ? "option" : recipePath;
        int? width = explicitOptions?.Width ?? file?.Width ?? input.Width;
        int? height = explicitOptions?.Height ?? file?.Height ?? input.Height;
        if (width is null || height is null)
            throw new AuditInputException("--size",
                $"the model's input '{input.Name}' has a symbolic height or width; give the input size with --size N or WxH (or 'width'/'height' in {recipePath})");
        if (width < 1 || height < 1)
            throw new AuditInputException(Source(r => r.Width ?? r.Height), $"input size {width}x{height} must be positive (field 'width'/'height')");
        OnnxGuard.CheckInputSize(Source(r => r.Width ?? r.Height), "field 'width'/'height'", height.Value, width.Value);
        if ((input.Width is int w && w != width) || (input.Height is int h && h != height))
            throw new AuditInputException(Source(r => r.Width ?? r.Height),
                $"input size {width}x{height} (field 'width'/'height') differs from the model's fixed input {input.Width}x{input.Height}");
        var mean = explicitOptions?.Mean ?? file?.Mean ?? (graphNormalises ? new float[input.Channels] : Broadcast(InputRecipe.ImageNetMean, input.Channels));
        var std = explicitOptions?.Std ?? file?.Std ?? (graphNormalises ? Enumerable.Repeat(1f, input.Channels).ToArray() : Broadcast(InputRecipe.ImageNetStd, input.Channels));
        CheckPerChannel(Source(r => r.Mean), "mean", mean, input.Channels, allowZero: true);
        CheckPerChannel(Source(r => r.Std), "std", std, input.Channels, allowZero: false);
        float scale = explicitOptions?.PixelScale ?? file?.PixelScale ?? 1f;
        if (!(scale > 0) || float.IsInfinity(scale))
            throw new AuditInputException(Source(r => r.PixelScale), $"field 'pixel_scale' is {scale}, expected a positive number");
        return new InputRecipe(width.Value, height.Value,
            explicitOptions?.Resize ?? file?.Resize ?? ResizeMode.Stretch,
            scale, mean, std,
            explicitOptions?.Order ?? file?.Order ?? ChannelOrder.Rgb,
            explicitOptions?.ClassNames ?? file?.ClassNames);
    }

    // A grey model gets the mean of the ImageNet values (common practice for single-channel transfer).
    private static float[] Broadcast(float[] rgb, int channels) => channels == 3 ? rgb : [rgb.Average()];

    private static void CheckPerChannel(string subject, string field, float[] values, int channels, bool allowZero)
    {
        if (values.Length != channels)
            throw new AuditInputException(subject, $"field '{field}' has {values.Length} values, the model's input has {channels} channels");
        foreach (var v in values)
            if (float.IsNaN(v) || float.IsInfinity(v) || (!allowZero && v <= 0))
                throw new AuditInputException(subject, $"field '{field}' holds {v.ToString(CultureInfo.InvariantCulture)}, expected {(allowZero ? "a finite number" : "a positive number")}");
    }

    private static int? Int(string path, JsonElement root, string field)
    {
        if (!root.TryGetProperty(field, out var e) || e.ValueKind == JsonValueKind.Null) return null;
        if (e.ValueKind != JsonValueKind.Number || !e.TryGetInt32(out int v) || v < 1)
            throw new AuditInputException(path, $"field '{field}' must be a positive whole number, found {e.GetRawText()}");
        return v;
    }

    private static string? Str(string path, JsonElement root, string field)
    {
        if (!root.TryGetProperty(field, out var e) || e.ValueKind == JsonValueKind.Null) return null;
        if (e.ValueKind != JsonValueKind.String)
            throw new AuditInputException(path, $"field '{field}' must be a string, found {e.GetRawText()}");
        return e.GetString();
    }

    private static float[]? Floats(string path, JsonElement root, string field, bool scalar)
    {
        if (!root.TryGetProperty(field, out var e) || e.ValueKind == JsonValueKind.Null) return null;
        if (scalar && e.ValueKind == JsonValueKind.Number) return [e.GetSingle()];
        if (!scalar && e.ValueKind == JsonValueKind.Array && e.EnumerateArray().All(x => x.ValueKind == JsonValueKind.Number))
            return e.EnumerateArray().Select(x => x.GetSingle()).ToArray();
        throw new AuditInputException(path, $"field '{field}' must be {(scalar ? "a number" : "an array of numbers")}, found {e.GetRawText()}");
    }

    private static string[]? ClassNames(string path, JsonElement root)
    {
        if (!root.TryGetProperty("class_names", out var e) || e.ValueKind == JsonValueKind.Null) return null;
        if (e.ValueKind != JsonValueKind.Array || e.EnumerateArray().Any(x => x.ValueKind != JsonValueKind.String))
            throw new AuditInputException(path, $"field 'class_names' must be an array of strings, found {e.GetRawText()}");
        return e.EnumerateArray().Select(x => x.GetString()!).ToArray();
    }
}
