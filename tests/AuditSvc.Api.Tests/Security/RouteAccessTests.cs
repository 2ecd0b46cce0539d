using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using System.Text.RegularExpressions;
using AuditSvc.Api.Tests.Hosting;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Routing;

namespace AuditSvc.Api.Tests.Security;

/// <summary>
/// Every REST route is read from the service's own OpenAPI document, so a new route is tested the day it is added:
/// no key and a revoked key answer 401; team B's key on team A's ids never succeeds. A route this table cannot call
/// across teams fails the test until someone says how.
/// </summary>
public sealed partial class RouteAccessTests(AccessFixture f) : IClassFixture<AccessFixture>
{
    public sealed record Operation(string Method, string Template);

    [PgFact]
    public async Task OpenApiRoutes_NoKey_Answer401Problem()
    {
        var failures = new List<string>();
        using var anonymous = f.Client(null);
        foreach (var op in await OperationsAsync())
        {
            using var response = await anonymous.SendAsync(Request(op, f.ModelId, f.ImageSetId, f.AuditId));
            Expect401(op, response, failures);
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
    }

    [PgFact]
    public async Task OpenApiRoutes_RevokedKey_Answer401Problem()
    {
        var failures = new List<string>();
        using var revoked = f.Client(f.RevokedKey);
        foreach (var op in await OperationsAsync())
        {
            using var response = await revoked.SendAsync(Request(op, f.ModelId, f.ImageSetId, f.AuditId));
            Expect401(op, response, failures);
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
    }

    [PgFact]
    public async Task OpenApiRoutes_OtherTeamsKeyOnOwnersIds_NeverSucceedNorShowThem()
    {
        var failures = new List<string>();
        var operations = await OperationsAsync();
        foreach (var op in operations)
        {
            using var response = await f.OtherApi.SendAsync(Request(op, f.ModelId, f.ImageSetId, f.AuditId));
            var status = (int)response.StatusCode;
            var body = await response.Content.ReadAsStringAsync();
            var expected = CrossTeam(op);
            if (expected == Expected.Refused && status is not (400 or 403 or 404))
                failures.Add($"{op.Method} {op.Template}: {status}, expected 400/403/404 for another team's ids\n{body}");
            if (expected == Expected.OwnRowsOnly && status is not (200 or 201))
                failures.Add($"{op.Method} {op.Template}: {status}, expected the caller's own rows\n{body}");
            foreach (var id in f.OwnerIds.Where(id => body.Contains(id.ToString(), StringComparison.OrdinalIgnoreCase) && status is >= 200 and < 300))
                failures.Add($"{op.Method} {op.Template}: {status} and shows team A's id {id}");
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
        // The calls above reach the handlers: the owner's GETs on the same ids succeed.
        foreach (var op in operations.Where(o => o.Method == "GET"))
        {
            using var mine = await f.OwnerApi.SendAsync(Request(op, f.ModelId, f.ImageSetId, f.AuditId));
            Assert.True(mine.IsSuccessStatusCode, $"owner's {op.Method} {op.Template}: {(int)mine.StatusCode}");
        }
    }

    [PgFact]
    public async Task OpenApiDocument_ListsTheRestRoutesAndNothingUnderUi()
    {
        var operations = await OperationsAsync();

        Assert.True(operations.Count >= 15, $"only {operations.Count} operations in /openapi/v1.json");
        Assert.All(operations, o => Assert.StartsWith("/api/", o.Template, StringComparison.Ordinal));
    }

    [PgFact]
    public async Task EveryMappedEndpoint_IsInOpenApiOrTheUiTableOrKnownAnonymous()
    {
        var documented = (await OperationsAsync()).Select(o => $"{o.Method} {o.Template}").ToHashSet();
        var listed = UiTable.Routes.Select(r => $"{r.Method} {r.Template}").Concat(UiTable.Anonymous).ToHashSet();

        var missing = Endpoints(f.Svc.App).Where(e => !documented.Contains(e) && !listed.Contains(e)).ToList();

        Assert.True(missing.Count == 0, "routes no access test covers (add them to UiTable or the OpenAPI document):\n" + string.Join("\n", missing));
        Assert.All(UiTable.Routes, r => Assert.Contains($"{r.Method} {r.Template}", Endpoints(f.Svc.App)));
    }

    [PgFact]
    public async Task Key_RevokedWhileInUse_StopsAtTheNextRequest()
    {
        var (key, info) = await Ui.BrowserSession.KeyAsync(f.Svc, "team-a", "short-lived");
        using var client = f.Client(key);
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync($"/api/audits/{f.AuditId}")).StatusCode);

        await new Data.Teams.ApiKeyStore(f.Svc.Db.DataSource).RevokeAsync(info.Prefix, CancellationToken.None);

        Assert.Equal(HttpStatusCode.Unauthorized, (await client.GetAsync($"/api/audits/{f.AuditId}")).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await client.PostAsync($"/api/audits/{f.AuditId}/cancel", null)).StatusCode);
    }

    // Team B must not register the folder of team A's upload (it answered 201 before the folder route's containment).
    [PgFact]
    public async Task RegisterFolder_AnotherTeamsUploadedFolder_IsRefused()
    {
        using var response = await f.OtherApi.PostAsJsonAsync("/api/image-sets/folder", new { path = f.ImageSetFolder, name = "borrowed" });

        Assert.False(response.IsSuccessStatusCode, $"team B registered team A's folder: {(int)response.StatusCode}");
        Assert.InRange((int)response.StatusCode, 400, 499);
    }

    internal enum Expected { Refused, OwnRowsOnly }

    /// <summary>What team B may get when it names team A's objects. A route with a body must be listed here.</summary>
    internal static Expected CrossTeam(Operation op) => (op.Method, op.Template) switch
    {
        ("GET", var t) when !t.Contains('{', StringComparison.Ordinal) => Expected.OwnRowsOnly, // lists, filtered by team A's ids
        ("POST", "/api/models") => Expected.OwnRowsOnly, // names no other object: creates the caller's own
        (_, var t) when t.Contains('{', StringComparison.Ordinal) => Expected.Refused,
        ("POST", "/api/image-sets" or "/api/image-sets/folder" or "/api/audits") => Expected.Refused,
        _ => throw new InvalidOperationException($"{op.Method} {op.Template}: say in RouteAccessTests.CrossTeam how this route is called across teams"),
    };

    /// <summary>The request for <paramref name="op"/>, naming the given ids wherever the route or its body takes one.</summary>
    internal static HttpRequestMessage Request(Operation op, Guid model, Guid set, Guid audit)
    {
        var path = PathParameter().Replace(op.Template, m => m.Groups[1].Value switch
        {
            "id" when op.Template.StartsWith("/api/models/", StringComparison.Ordinal) => model.ToString(),
            "id" when op.Template.StartsWith("/api/image-sets/", StringComparison.Ordinal) => set.ToString(),
            "id" when op.Template.StartsWith("/api/audits/", StringComparison.Ordinal) => audit.ToString(),
            var name => throw new InvalidOperationException($"{op.Template}: no id of team A for {{{name}}}; extend RouteAccessTests.Request"),
        });
        if (op.Method == "GET" && path == "/api/audits") path += $"?modelId={model}&imageSetId={set}";
        var request = new HttpRequestMessage(new HttpMethod(op.Method), path);
        request.Content = (op.Method, op.Template) switch
        {
            ("POST", "/api/models") => ModelForm(),
            ("POST", "/api/image-sets") => SetForm(model),
            ("POST", "/api/image-sets/folder") => AccessFixture.Json(new { path = "sets", modelId = model }),
            ("POST", "/api/audits") => AccessFixture.Json(new { modelId = model, imageSetId = set, chunkSize = 2 }),
            ("POST", "/api/audits/{id}/reviews") => AccessFixture.Json(new { finding = 0, reviewer = "mallory", decision = "dismissed", note = "not ours" }),
            ("POST", "/api/audits/{id}/cancel") => null,
            ("GET", _) => null,
            _ => throw new InvalidOperationException($"{op.Method} {op.Template}: say in RouteAccessTests.Request what body it takes"),
        };
        return request;
    }

    private static MultipartFormDataContent ModelForm()
    {
        var file = new ByteArrayContent([7, 7, 7]);
        file.Headers.ContentType = new MediaTypeHeaderValue("application/octet-stream");
        return new MultipartFormDataContent { { new StringContent("""{"width":32,"height":32}"""), "recipe" }, { file, "model", "other.onnx" } };
    }

    private static MultipartFormDataContent SetForm(Guid model)
    {
        var file = new ByteArrayContent(Uploads.Zip(2, "cat", "dog"));
        file.Headers.ContentType = new MediaTypeHeaderValue("application/zip");
        return new MultipartFormDataContent { { new StringContent(model.ToString()), "modelId" }, { file, "archive", "set.zip" } };
    }

    private static void Expect401(Operation op, HttpResponseMessage response, List<string> failures)
    {
        if (response.StatusCode != HttpStatusCode.Unauthorized)
            failures.Add($"{op.Method} {op.Template}: {(int)response.StatusCode}, expected 401");
        else if (response.Content.Headers.ContentType?.MediaType != "application/problem+json")
            failures.Add($"{op.Method} {op.Template}: 401 without a problem document");
    }

    private async Task<IReadOnlyList<Operation>> OperationsAsync()
    {
        using var anonymous = f.Client(null);
        var doc = await anonymous.GetFromJsonAsync<JsonElement>("/openapi/v1.json");
        return doc.GetProperty("paths").EnumerateObject()
            .SelectMany(p => p.Value.EnumerateObject()
                .Where(m => m.Name is "get" or "post" or "put" or "patch" or "delete")
                .Select(m => new Operation(m.Name.ToUpperInvariant(), p.Name.TrimEnd('/') is { Length: > 0 } t ? t : "/")))
            .ToList();
    }

    /// <summary>"METHOD /template" of every endpoint the app maps, constraints stripped ({id:guid} → {id}).</summary>
    internal static HashSet<string> Endpoints(WebApplication app) =>
        ((IEndpointRouteBuilder)app).DataSources.SelectMany(d => d.Endpoints).OfType<RouteEndpoint>()
            .SelectMany(e => (e.Metadata.GetMetadata<Microsoft.AspNetCore.Routing.HttpMethodMetadata>()?.HttpMethods ?? ["*"])
                .Select(m => $"{m} {Normalise(e.RoutePattern.RawText ?? "")}"))
            .ToHashSet();

    private static string Normalise(string raw)
    {
        var t = Constraint().Replace(raw, "{$1}");
        if (!t.StartsWith('/')) t = "/" + t;
        return t.Length > 1 ? t.TrimEnd('/') : t;
    }

    [GeneratedRegex(@"\{(\w+)\}")]
    private static partial Regex PathParameter();

    [GeneratedRegex(@"\{(\w+)(:[^}]*)?\}")]
    private static partial Regex Constraint();
}
