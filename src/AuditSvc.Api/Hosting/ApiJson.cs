using System.Text.Json;

namespace AuditSvc.Api.Hosting;

/// <summary>JSON for what the service stores and returns: camelCase, as the endpoints emit.</summary>
public static class ApiJson
{
    public static JsonSerializerOptions Options { get; } = new(JsonSerializerDefaults.Web);
}
