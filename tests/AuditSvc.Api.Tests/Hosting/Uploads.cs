using System.IO.Compression;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;

namespace AuditSvc.Api.Tests.Hosting;

/// <summary>Small invented uploads: a stand-in model file and a class-per-folder zip.</summary>
internal static class Uploads
{
    public static async Task<JsonElement> ModelAsync(HttpClient client, byte[]? bytes = null, string? recipe = """{"width":32,"height":32}""")
    {
        using var form = new MultipartFormDataContent();
        form.Add(new StringContent("classifier"), "name");
        if (recipe is not null) form.Add(new StringContent(recipe), "recipe");
        var file = new ByteArrayContent(bytes ?? [1, 2, 3, 4, 5]);
        file.Headers.ContentType = new MediaTypeHeaderValue("application/octet-stream");
        form.Add(file, "model", "classifier.onnx");
        var response = await client.PostAsync("/api/models", form);
        Assert.Equal(System.Net.HttpStatusCode.Created, response.StatusCode);
        return await response.Content.ReadFromJsonAsync<JsonElement>();
    }

    /// <summary>A model upload as a client sends it, whatever the answer.</summary>
    public static async Task<HttpResponseMessage> PostModelAsync(HttpClient client, byte[] bytes, string? recipe, string name)
    {
        using var form = new MultipartFormDataContent();
        form.Add(new StringContent(name), "name");
        if (recipe is not null) form.Add(new StringContent(recipe), "recipe");
        var file = new ByteArrayContent(bytes);
        file.Headers.ContentType = new MediaTypeHeaderValue("application/octet-stream");
        form.Add(file, "model", "model.onnx");
        return await client.PostAsync("/api/models", form);
    }

    public static byte[] Zip(int perClass, params string[] classes)
    {
        using var ms = new MemoryStream();
        using (var zip = new ZipArchive(ms, ZipArchiveMode.Create, leaveOpen: true))
        {
            foreach (var label in classes)
            {
                for (var i = 0; i < perClass; i++)
                {
                    using var s = zip.CreateEntry($"{label}/{label}-{i:D3}.png").Open();
                    s.Write(System.Text.Encoding.UTF8.GetBytes($"{label} {i}"));
                }
            }
        }
        return ms.ToArray();
    }

    public static async Task<HttpResponseMessage> PostZipAsync(HttpClient client, byte[] zip)
    {
        using var form = new MultipartFormDataContent();
        form.Add(new StringContent("invented set"), "name");
        var file = new ByteArrayContent(zip);
        file.Headers.ContentType = new MediaTypeHeaderValue("application/zip");
        form.Add(file, "archive", "set.zip");
        return await client.PostAsync("/api/image-sets", form);
    }

    public static async Task<JsonElement> ImageSetAsync(HttpClient client, int perClass = 10)
    {
        var response = await PostZipAsync(client, Zip(perClass, "cat", "dog"));
        Assert.Equal(System.Net.HttpStatusCode.Created, response.StatusCode);
        return await response.Content.ReadFromJsonAsync<JsonElement>();
    }

    public static async Task<HttpResponseMessage> SubmitAsync(HttpClient client, JsonElement model, JsonElement set, int chunkSize) =>
        await client.PostAsJsonAsync("/api/audits", new
        {
            modelId = model.GetProperty("id").GetGuid(),
            imageSetId = set.GetProperty("id").GetGuid(),
            chunkSize,
            policy = new { leakage_threshold = 0.2 },
        });
}
