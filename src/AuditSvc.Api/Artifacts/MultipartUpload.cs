using AuditSvc.Core;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.WebUtilities;
using Microsoft.Net.Http.Headers;

namespace AuditSvc.Api.Artifacts;

/// <summary>
/// The text fields of a multipart form and the one file it carried, already on disk. Disposing it releases the file's
/// content lock: dispose it after the row is written or the refused upload's files are discarded, never before.
/// </summary>
public sealed record UploadForm(IReadOnlyDictionary<string, string> Fields, StoredArtifact File) : IAsyncDisposable
{
    public ValueTask DisposeAsync() => File.Hold?.DisposeAsync() ?? ValueTask.CompletedTask;
}

/// <summary>
/// Reads multipart/form-data section by section: the file part goes straight from the request stream to
/// the artifact store, so an upload of any size never sits in memory (nor in ASP.NET's form buffer).
/// </summary>
public static class MultipartUpload
{
    private const int MaxFieldChars = 1 << 20;

    public static async Task<UploadForm> ReadAsync(HttpRequest request, string fileField, string extension,
        ArtifactStore store, long maxBytes, CancellationToken ct)
    {
        if (!MediaTypeHeaderValue.TryParse(request.ContentType, out var type) || !type.MediaType.Equals("multipart/form-data", StringComparison.OrdinalIgnoreCase))
            throw new AuditInputException("Content-Type", "must be multipart/form-data");
        var boundary = HeaderUtilities.RemoveQuotes(type.Boundary).Value;
        if (string.IsNullOrEmpty(boundary)) throw new AuditInputException("Content-Type", "multipart boundary is missing");

        var reader = new MultipartReader(boundary, request.Body);
        var fields = new Dictionary<string, string>(StringComparer.Ordinal);
        StoredArtifact? file = null;
        try
        {
            return await ReadSectionsAsync(reader, fields, fileField, extension, store, maxBytes, ct, f => file = f);
        }
        catch
        {
            // The rest of the form was refused or the client went away: the blob this request stored goes too.
            store.Discard(file, null);
            if (file?.Hold is { } hold) await hold.DisposeAsync();
            throw;
        }
    }

    private static async Task<UploadForm> ReadSectionsAsync(MultipartReader reader, Dictionary<string, string> fields, string fileField,
        string extension, ArtifactStore store, long maxBytes, CancellationToken ct, Action<StoredArtifact> saved)
    {
        StoredArtifact? file = null;
        while (await reader.ReadNextSectionAsync(ct) is { } section)
        {
            if (!ContentDispositionHeaderValue.TryParse(section.ContentDisposition, out var disposition)) continue;
            var name = HeaderUtilities.RemoveQuotes(disposition.Name).Value ?? "";
            if (disposition.IsFileDisposition() || name == fileField)
            {
                if (name != fileField) throw new AuditInputException(name, $"unexpected file part; send the file as '{fileField}'");
                if (file is not null) throw new AuditInputException(fileField, "sent twice");
                file = await store.SaveAsync(section.Body, extension, maxBytes, fileField, ct);
                saved(file);
            }
            else
            {
                using var text = new StreamReader(section.Body);
                var buffer = new char[MaxFieldChars + 1];
                var n = await text.ReadBlockAsync(buffer.AsMemory(), ct);
                if (n > MaxFieldChars) throw new AuditInputException(name, $"longer than {MaxFieldChars} characters");
                fields[name] = new string(buffer, 0, n);
            }
        }
        return new UploadForm(fields, file ?? throw new AuditInputException(fileField, "is required (a file part of the form)"));
    }
}
