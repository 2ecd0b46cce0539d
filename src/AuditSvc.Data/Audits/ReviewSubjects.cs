using System.Text.Json;

namespace AuditSvc.Data.Audits;

/// <summary>
/// The cues a review may name in one audit, as <c>attribute=value</c> keys: the findings' attribute values, and the
/// audit's attributes with their values (image-set columns, values taken up by the intervention pass, inferred place
/// cues, which carry "yes"), read from the stored audit.json.
/// </summary>
public static class ReviewSubjects
{
    public static string CueKey(string attribute, string value) => $"{attribute}={value}";

    /// <summary>Every cue key the audit knows; a result that is missing or not JSON contributes nothing.</summary>
    public static HashSet<string> Cues(IEnumerable<(string Attribute, string Value)> findings, string? resultJson)
    {
        var keys = findings.Select(f => CueKey(f.Attribute, f.Value)).ToHashSet(StringComparer.Ordinal);
        if (string.IsNullOrEmpty(resultJson)) return keys;
        JsonDocument doc;
        try { doc = JsonDocument.Parse(resultJson); }
        catch (JsonException) { return keys; }
        using (doc)
        {
            var root = doc.RootElement;
            if (root.ValueKind != JsonValueKind.Object) return keys;
            foreach (var f in Array(root, "findings")) AddPair(keys, f, "attribute", "value");
            foreach (var g in Array(root, "cue_groups")) AddPair(keys, g, "attribute", "value");
            foreach (var a in Array(root, "attributes"))
            {
                if (Text(a, "name") is not { } name) continue;
                foreach (var c in Array(a, "cues")) if (Text(c, "value") is { } v) keys.Add(CueKey(name, v));
                if (a.TryGetProperty("inferred", out var inf) && inf.ValueKind == JsonValueKind.True) keys.Add(CueKey(name, "yes"));
            }
            foreach (var c in Array(root, "candidates")) if (Text(c, "attribute") is { } name) keys.Add(CueKey(name, "yes"));
            if (root.TryGetProperty("image_set", out var set) && set.ValueKind == JsonValueKind.Object)
            {
                foreach (var a in Array(set, "attributes"))
                {
                    if (Text(a, "name") is not { } name) continue;
                    foreach (var v in Array(a, "values")) if (Text(v, "value") is { } value) keys.Add(CueKey(name, value));
                }
            }
        }
        return keys;
    }

    private static void AddPair(HashSet<string> keys, JsonElement e, string a, string v)
    {
        if (Text(e, a) is { } attribute && Text(e, v) is { } value) keys.Add(CueKey(attribute, value));
    }

    private static IEnumerable<JsonElement> Array(JsonElement e, string name) =>
        e.ValueKind == JsonValueKind.Object && e.TryGetProperty(name, out var p) && p.ValueKind == JsonValueKind.Array
            ? p.EnumerateArray().ToList()
            : [];

    private static string? Text(JsonElement e, string name) =>
        e.ValueKind == JsonValueKind.Object && e.TryGetProperty(name, out var p) && p.ValueKind == JsonValueKind.String ? p.GetString() : null;
}
