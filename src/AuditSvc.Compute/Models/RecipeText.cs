using System.Globalization;
using System.Text;
using System.Text.Json;
using AuditSvc.Core.Models;

namespace AuditSvc.Compute.Models;

/// <summary>
/// A complete input recipe as JSON in the recipe file's own words (<c>pixel_scale</c>, <c>channel_order</c>,
/// <c>shorter-side-center-crop</c>): what the service stores and echoes back is the form a user wrote beside the model,
/// filled in, never a second spelling of it.
/// </summary>
public static class RecipeText
{
    public static string Write(InputRecipe r)
    {
        ArgumentNullException.ThrowIfNull(r);
        using var ms = new MemoryStream();
        using (var w = new Utf8JsonWriter(ms))
        {
            w.WriteStartObject();
            w.WriteNumber("width", r.Width);
            w.WriteNumber("height", r.Height);
            w.WriteString("resize", r.Resize == ResizeMode.ShorterSideCenterCrop ? "shorter-side-center-crop" : "stretch");
            w.WriteNumber("pixel_scale", r.PixelScale);
            Floats(w, "mean", r.Mean);
            Floats(w, "std", r.Std);
            w.WriteString("channel_order", r.Order == ChannelOrder.Bgr ? "bgr" : "rgb");
            if (r.ClassNames is { } names)
            {
                w.WriteStartArray("class_names");
                foreach (var n in names) w.WriteStringValue(n);
                w.WriteEndArray();
            }
            else w.WriteNull("class_names");
            w.WriteEndObject();
        }
        return Encoding.UTF8.GetString(ms.ToArray());
    }

    /// <summary>Reads what <see cref="Write"/> wrote; null when the text is not a complete recipe in these words.</summary>
    public static InputRecipe? TryRead(string json)
    {
        try
        {
            using var doc = JsonDocument.Parse(json);
            var root = doc.RootElement;
            if (root.ValueKind != JsonValueKind.Object || !root.TryGetProperty("pixel_scale", out var scale) || !root.TryGetProperty("channel_order", out var order))
                return null;
            var names = root.TryGetProperty("class_names", out var c) && c.ValueKind == JsonValueKind.Array
                ? c.EnumerateArray().Select(x => x.GetString() ?? "").ToList() : null;
            return new InputRecipe(root.GetProperty("width").GetInt32(), root.GetProperty("height").GetInt32(),
                root.GetProperty("resize").GetString() == "shorter-side-center-crop" ? ResizeMode.ShorterSideCenterCrop : ResizeMode.Stretch,
                scale.GetSingle(), Floats(root.GetProperty("mean")), Floats(root.GetProperty("std")),
                order.GetString() == "bgr" ? ChannelOrder.Bgr : ChannelOrder.Rgb, names);
        }
        catch (Exception e) when (e is JsonException or KeyNotFoundException or InvalidOperationException or FormatException)
        {
            return null;
        }
    }

    private static void Floats(Utf8JsonWriter w, string name, float[] values)
    {
        w.WriteStartArray(name);
        // Written as the shortest text that reads back to the same float (0.485, not 0.48500001430511475).
        foreach (var v in values) w.WriteRawValue(v.ToString("R", CultureInfo.InvariantCulture));
        w.WriteEndArray();
    }

    private static float[] Floats(JsonElement e) => e.EnumerateArray().Select(x => x.GetSingle()).ToArray();
}
