using System.Text.Json;
using System.Text.Json.Serialization;

namespace AuditSvc.Core.Audits;

/// <summary>
/// Reads and writes audit.json (described by schemas/audit.schema.json): snake_case names, enums as strings,
/// indented, and non-finite numbers written as null because JSON has no NaN or Infinity.
/// </summary>
public static class AuditJson
{
    /// <summary>The options audit.json is written and read with; shared so hosts serve the same document.</summary>
    public static JsonSerializerOptions Options { get; } = CreateOptions();

    public static string Serialize(AuditResult result)
    {
        ArgumentNullException.ThrowIfNull(result);
        return JsonSerializer.Serialize(result, Options);
    }

    /// <summary>Reads an audit.json document; a document that is not one throws <see cref="AuditInputException"/>.</summary>
    public static AuditResult Deserialize(string json)
    {
        ArgumentNullException.ThrowIfNull(json);
        try
        {
            var result = JsonSerializer.Deserialize<AuditResult>(json, Options)
                ?? throw new AuditInputException("audit.json", "the document is null");
            CheckParts(result);
            return result;
        }
        catch (JsonException e)
        {
            throw new AuditInputException("audit.json" + (e.Path is null ? "" : $" at {e.Path}"), e.Message, e);
        }
    }

    // The deserialiser leaves a missing member null whatever its declared type; `{}` or another JSON file
    // must be refused naming the member, not fail later inside a comparison.
    private static void CheckParts(AuditResult r)
    {
        (string Name, object? Value)[] parts =
        [
            ("schema_version", r.SchemaVersion), ("verdict", r.Verdict), ("model", r.Model), ("model.layers", r.Model?.Layers),
            ("attributes", r.Attributes), ("findings", r.Findings), ("cue_groups", r.CueGroups),
        ];
        foreach (var (name, value) in parts)
            if (value is null) throw new AuditInputException($"audit.json: {name}", "is missing: not an audit.json written by auditsvc");
    }

    /// <summary>Writes the document to <paramref name="path"/> (UTF-8, no byte-order mark), creating its folder.</summary>
    public static void Write(string path, AuditResult result)
    {
        var dir = Path.GetDirectoryName(Path.GetFullPath(path));
        if (!string.IsNullOrEmpty(dir)) Directory.CreateDirectory(dir);
        File.WriteAllText(path, Serialize(result) + "\n", new System.Text.UTF8Encoding(false));
    }

    private static JsonSerializerOptions CreateOptions()
    {
        var o = new JsonSerializerOptions
        {
            PropertyNamingPolicy = JsonNamingPolicy.SnakeCaseLower,
            WriteIndented = true,
            // Labels and attribute values are user text; keep them readable rather than \u-escaped.
            Encoder = System.Text.Encodings.Web.JavaScriptEncoder.UnsafeRelaxedJsonEscaping,
        };
        o.Converters.Add(new JsonStringEnumConverter(JsonNamingPolicy.SnakeCaseLower));
        o.Converters.Add(new FiniteDoubleConverter());
        o.Converters.Add(new FiniteSingleConverter());
        o.MakeReadOnly(populateMissingResolver: true);
        return o;
    }

    /// <summary>Writes NaN and ±Infinity as null and reads null back as NaN (an odds ratio can be infinite, an AUROC undefined).</summary>
    private sealed class FiniteDoubleConverter : JsonConverter<double>
    {
        public override bool HandleNull => true;

        public override double Read(ref Utf8JsonReader reader, Type typeToConvert, JsonSerializerOptions options) =>
            reader.TokenType == JsonTokenType.Null ? double.NaN : reader.GetDouble();

        public override void Write(Utf8JsonWriter writer, double value, JsonSerializerOptions options)
        {
            if (double.IsFinite(value)) writer.WriteNumberValue(value);
            else writer.WriteNullValue();
        }
    }

    private sealed class FiniteSingleConverter : JsonConverter<float>
    {
        public override bool HandleNull => true;

        public override float Read(ref Utf8JsonReader reader, Type typeToConvert, JsonSerializerOptions options) =>
            reader.TokenType == JsonTokenType.Null ? float.NaN : reader.GetSingle();

        public override void Write(Utf8JsonWriter writer, float value, JsonSerializerOptions options)
        {
            if (float.IsFinite(value)) writer.WriteNumberValue(value);
            else writer.WriteNullValue();
        }
    }
}
