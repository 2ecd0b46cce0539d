using System.Security.Cryptography;
using System.Text;
using System.Text.Json;
using AuditSvc.Api.Artifacts;
using AuditSvc.Api.Auth;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Hosting;
using AuditSvc.Api.Models;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Core;
using AuditSvc.Core.ImageSets;
using AuditSvc.Data.ImageSets;
using AuditSvc.Data.Models;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.AspNetCore.Routing;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.ImageSets;

public sealed record ImageSetResponse(Guid Id, string Name, string ContentHash, int ItemCount, JsonElement Labels,
    JsonElement Attributes, JsonElement Report, DateTime CreatedAt)
{
    public static ImageSetResponse From(ImageSetRow s) => new(s.Id, s.Name, s.ContentHash, s.ItemCount,
        JsonText.Element(s.Labels), JsonText.Element(s.Attributes), JsonText.Element(s.Report), s.CreatedAt);
}

/// <summary>
/// Registers a folder the team put under the artifact root (path relative to it): inside incoming/&lt;team&gt;/ or
/// inside one of its own uploads. With a model id, labels
/// are read against that model's class names (needed when labels are names rather than output indices).
/// </summary>
public sealed record RegisterFolder(string? Path, string? Name, Guid? ModelId);

public static class ImageSetEndpoints
{
    public static RouteGroupBuilder MapImageSets(this RouteGroupBuilder api)
    {
        var group = api.MapGroup("/image-sets").WithTags("image-sets");
        group.MapPost("/", Upload).DisableAntiforgery()
            .Accepts<IFormFile>("multipart/form-data")
            .WithSummary("Upload a .zip image set (form part 'archive', optional fields 'name' and 'modelId'); returns the intake report.")
            .ProducesValidationProblem();
        group.MapPost("/folder", Register)
            .WithSummary("Register a folder of this team (under incoming/<team>/ or inside its own uploads) as an image set; returns the intake report.")
            .ProducesValidationProblem();
        group.MapGet("/", List).WithSummary("The team's image sets, newest first, a page at a time (limit 1–500, default 100; offset); a full page links the next.").Produces<List<ImageSetResponse>>();
        group.MapGet("/{id:guid}", Get);
        return api;
    }

    private static async Task<Created<ImageSetResponse>> Upload(HttpRequest request, ArtifactStore artifacts, IAuditEngine engine,
        ImageSetStore sets, ModelStore models, IOptions<ServiceOptions> options, CancellationToken ct)
    {
        // Disposed last: the content's lock is held until the row is written or the refused upload's files are gone.
        await using var form = await MultipartUpload.ReadAsync(request, "archive", ".zip", artifacts, options.Value.MaxUploadBytes, ct);
        string? createdFolder = null;
        try
        {
            Guid? modelId = null;
            if (form.Fields.GetValueOrDefault("modelId") is { Length: > 0 } m)
                modelId = Guid.TryParse(m, out var g) ? g : throw new AuditInputException("modelId", $"'{m}' is not a model id");
            var classNames = await ClassNamesAsync(request.HttpContext, models, modelId, ct);
            var (folder, created) = artifacts.Unpack(form.File, "archive", new ZipLimits(), ct);
            if (created) createdFolder = folder;
            var name = form.Fields.GetValueOrDefault("name") is { Length: > 0 } n ? n : "image set";
            return await AddAsync(request.HttpContext, artifacts, engine, sets, name, folder, form.File.ContentHash, classNames, ct);
        }
        catch
        {
            // A rejected (or cancelled) upload leaves nothing behind that it alone put there.
            artifacts.Discard(form.File, createdFolder);
            throw;
        }
    }

    private static async Task<Created<ImageSetResponse>> Register(RegisterFolder body, HttpContext http, ArtifactStore artifacts,
        IAuditEngine engine, ImageSetStore sets, ModelStore models, CancellationToken ct)
    {
        var classNames = await ClassNamesAsync(http, models, body.ModelId, ct);
        var team = http.User.TeamId();
        var folder = await artifacts.ResolveTeamFolderAsync(body.Path, http.User.TeamName(), rel => sets.OwnsFolderAsync(team, rel, ct), "path");
        return await AddAsync(http, artifacts, engine, sets, body.Name is { Length: > 0 } n ? n : folder, folder, null, classNames, ct);
    }

    private static async Task<IReadOnlyList<string>?> ClassNamesAsync(HttpContext http, ModelStore models, Guid? modelId, CancellationToken ct)
    {
        if (modelId is not { } id) return null;
        var model = await models.GetAsync(http.User.TeamId(), id, ct) ?? throw new AuditInputException("modelId", $"no model {id} for this team");
        return StoredRecipe.ClassNames(model.Recipe);
    }

    private static async Task<Created<ImageSetResponse>> AddAsync(HttpContext http, ArtifactStore artifacts, IAuditEngine engine,
        ImageSetStore sets, string name, string folder, string? contentHash, IReadOnlyList<string>? classNames, CancellationToken ct)
    {
        if (name.Length > 200) throw new AuditInputException("name", "longer than 200 characters");
        var table = await engine.IntakeImageSetAsync(artifacts.FullPath(folder), classNames, ct);
        if (table.Items.Count == 0) throw new AuditInputException("archive", $"no usable images ({table.Report.Problems.Count} problems at intake)");
        var row = await sets.AddAsync(http.User.TeamId(), name, contentHash ?? HashOf(table), folder,
            JsonSerializer.Serialize(table.Labels, ApiJson.Options), JsonSerializer.Serialize(table.Attributes, ApiJson.Options),
            JsonSerializer.Serialize(table.Report, ApiJson.Options), table.Items, artifacts.FullPath(folder), ct);
        return TypedResults.Created($"/api/image-sets/{row.Id}", ImageSetResponse.From(row));
    }

    // A registered folder has no single file to hash: hash what intake read (path, label, image hash per item).
    private static string HashOf(ItemTable table)
    {
        using var sha = IncrementalHash.CreateHash(HashAlgorithmName.SHA256);
        foreach (var item in table.Items)
            sha.AppendData(Encoding.UTF8.GetBytes($"{item.RelativePath}\t{table.Labels[item.Label]}\t{item.Sha256}\n"));
        return "sha256:" + Convert.ToHexStringLower(sha.GetHashAndReset());
    }

    private static async Task<IResult> List(HttpContext http, ImageSetStore sets, CancellationToken ct,
        [Microsoft.AspNetCore.Mvc.FromQuery] int? limit, [Microsoft.AspNetCore.Mvc.FromQuery] int? offset)
    {
        var (take, skip, problem) = Paging.Read(limit, offset);
        if (problem is not null) return problem;
        var rows = await sets.ListAsync(http.User.TeamId(), take, skip, ct);
        Paging.LinkNext(http, take, skip, rows.Count);
        return TypedResults.Ok(rows.Select(ImageSetResponse.From).ToList());
    }

    private static async Task<Results<Ok<ImageSetResponse>, ProblemHttpResult>> Get(Guid id, HttpContext http, ImageSetStore sets, CancellationToken ct) =>
        await sets.GetAsync(http.User.TeamId(), id, ct) is { } s
            ? TypedResults.Ok(ImageSetResponse.From(s))
            : TypedResults.Problem(statusCode: 404, title: $"no image set {id} for this team");
}
