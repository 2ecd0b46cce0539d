using System.Text.Json;
using System.Text.Json.Serialization;

namespace AuditSvc.Api.Hosting;

/// <summary>JSON for what the service stores and returns: camelCase, enums by name, as the endpoints emit.</summary>
public static class ApiJson
{
    public static JsonSerializerOptions Options { get; } = new(JsonSerializerDefaults.Web)
    {
        Converters = { new JsonStringEnumConverter(JsonNamingPolicy.KebabCaseLower) },
    };
}
