using System.Text.Json;
using AuditSvc.Api.Hosting;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Core.Models;

namespace AuditSvc.Api.Models;

/// <summary>
/// A model's recipe as the models table keeps it: in the recipe file's own words (<see cref="RecipeText"/>), or, for
/// rows stored before that, in the API's camelCase. Everything that reads a stored recipe goes through here.
/// </summary>
public static class StoredRecipe
{
    public static InputRecipe Read(string json) =>
        RecipeText.TryRead(json)
        ?? JsonSerializer.Deserialize<InputRecipe>(json, ApiJson.Options)
        ?? throw new AuditInputException("recipe", "is empty");

    /// <summary>The class names in output order, when the recipe names them (either spelling).</summary>
    public static IReadOnlyList<string>? ClassNames(string json)
    {
        using var recipe = JsonDocument.Parse(json);
        var root = recipe.RootElement;
        return root.ValueKind == JsonValueKind.Object
               && (root.TryGetProperty("class_names", out var names) || root.TryGetProperty("classNames", out names))
               && names.ValueKind == JsonValueKind.Array
            ? names.EnumerateArray().Select(e => e.GetString() ?? "").ToList()
            : null;
    }
}
