using System.Text.Json;
using AuditSvc.Core;

namespace AuditSvc.Api.Hosting;

internal static class JsonText
{
    /// <summary>Stored JSON text as an element to embed in a response.</summary>
    public static JsonElement Element(string json)
    {
        using var doc = JsonDocument.Parse(json);
        return doc.RootElement.Clone();
    }

    /// <summary>Checks a client's JSON text, naming the field when it does not parse or is not an object.</summary>
    public static string? Object(string? json, string field)
    {
        if (string.IsNullOrWhiteSpace(json)) return null;
        try
        {
            using var doc = JsonDocument.Parse(json);
            if (doc.RootElement.ValueKind != JsonValueKind.Object) throw new AuditInputException(field, "must be a JSON object");
            return doc.RootElement.GetRawText();
        }
        catch (JsonException e)
        {
            throw new AuditInputException(field, $"is not valid JSON: {e.Message}", e);
        }
    }
}
