using System.Text.Json;
using AuditSvc.Api.Artifacts;
using AuditSvc.Api.Auth;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Hosting;
using AuditSvc.Core;
using AuditSvc.Data.Models;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.AspNetCore.Routing;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Models;

public sealed record ModelResponse(Guid Id, string Name, string ContentHash, JsonElement Recipe, JsonElement Layers, DateTime CreatedAt)
{
    public static ModelResponse From(ModelRow m) =>
        new(m.Id, m.Name, m.ContentHash, JsonText.Element(m.Recipe), JsonText.Element(m.Layers), m.CreatedAt);
}

public static class ModelEndpoints
{
    public static RouteGroupBuilder MapModels(this RouteGroupBuilder api)
    {
        var group = api.MapGroup("/models").WithTags("models");
        group.MapPost("/", Upload).DisableAntiforgery()
            .Accepts<IFormFile>("multipart/form-data")
            .WithSummary("Upload an .onnx model (form part 'model') with an optional input recipe (field 'recipe', JSON) and 'name'; returns the layer catalogue.")
            .ProducesValidationProblem();
        group.MapGet("/", List).WithSummary("The team's models, newest first, a page at a time (limit 1–500, default 100; offset); a full page links the next.").Produces<List<ModelResponse>>();
        group.MapGet("/{id:guid}", Get).WithName("GetModel");
        return api;
    }

    private static async Task<Created<ModelResponse>> Upload(HttpRequest request, ArtifactStore artifacts, IAuditEngine engine,
        ModelStore models, IOptions<ServiceOptions> options, CancellationToken ct)
    {
        // Disposed last: the content's lock is held until the row is written or the refused upload's files are gone.
        await using var form = await MultipartUpload.ReadAsync(request, "model", ".onnx", artifacts, options.Value.MaxUploadBytes, ct);
        string? createdFolder = null;
        try
        {
            var name = form.Fields.GetValueOrDefault("name") is { Length: > 0 } n ? n : "model";
            if (name.Length > 200) throw new AuditInputException("name", "longer than 200 characters");
            var recipe = JsonText.Object(form.Fields.GetValueOrDefault("recipe"), "recipe");
            var (placed, created) = artifacts.PlaceModel(form.File, recipe);
            if (created) createdFolder = Path.GetDirectoryName(placed);
            var intake = await engine.InspectModelAsync(artifacts.FullPath(placed), ct);
            var row = await models.AddAsync(request.HttpContext.User.TeamId(), name, form.File.ContentHash, placed,
                intake.RecipeJson, intake.LayersJson, ct);
            return TypedResults.Created($"/api/models/{row.Id}", ModelResponse.From(row));
        }
        catch
        {
            // A refused model (not ONNX, a refused shape, a bad recipe or name) or a cancelled request leaves
            // nothing behind that it alone put there: neither the blob nor its (model, recipe) folder.
            artifacts.Discard(form.File, createdFolder);
            throw;
        }
    }

    private static async Task<IResult> List(HttpContext http, ModelStore models, CancellationToken ct,
        [Microsoft.AspNetCore.Mvc.FromQuery] int? limit, [Microsoft.AspNetCore.Mvc.FromQuery] int? offset)
    {
        var (take, skip, problem) = Paging.Read(limit, offset);
        if (problem is not null) return problem;
        var rows = await models.ListAsync(http.User.TeamId(), take, skip, ct);
        Paging.LinkNext(http, take, skip, rows.Count);
        return TypedResults.Ok(rows.Select(ModelResponse.From).ToList());
    }

    private static async Task<Results<Ok<ModelResponse>, ProblemHttpResult>> Get(Guid id, HttpContext http, ModelStore models, CancellationToken ct) =>
        await models.GetAsync(http.User.TeamId(), id, ct) is { } m
            ? TypedResults.Ok(ModelResponse.From(m))
            : TypedResults.Problem(statusCode: 404, title: $"no model {id} for this team");
}
