using System.Security.Cryptography;
using AuditSvc.Api.Hosting;
using AuditSvc.Compute.ImageSets;
using AuditSvc.Core;
using AuditSvc.Data.Artifacts;
using Microsoft.Extensions.Options;

namespace AuditSvc.Api.Artifacts;

/// <summary>A file stored under the artifact root by the SHA-256 of its content.</summary>
/// <param name="Created">This upload put the blob in place (an identical earlier upload had not).</param>
public sealed record StoredArtifact(string ContentHash, string RelativePath, string FullPath, long Length, bool Created = false)
{
    /// <summary>The content's lock (<see cref="ContentLocks"/>), held by this upload until its row is written or it is refused.</summary>
    public IAsyncDisposable? Hold { get; init; }
}

/// <summary>
/// Content-addressed files under the artifact root: an upload is streamed to a scratch file (this process's own
/// <see cref="ScratchSpace"/>, swept when the process is gone) while it is hashed, then moved to
/// blobs/sha256/ab/abcd….ext; a second upload of the same bytes finds it there and is dropped. Nothing is held in
/// memory whole. The content's lock is taken before the file is looked for and moved into place, and handed to the
/// caller with the stored file (<see cref="StoredArtifact.Hold"/>), so that an identical upload, or the orphan sweep,
/// waits until this one has written its row or removed what it alone put there.
/// </summary>
public sealed class ArtifactStore(IOptions<ServiceOptions> options, ScratchSpace scratch, ContentLocks locks)
{
    public string Root { get; } = Path.GetFullPath(options.Value.DataRoot);

    /// <summary>Where under the root each kind of stored entry lives; <see cref="StoredOrphans"/> reads the same layout.</summary>
    internal static readonly string BlobFolder = Path.Combine("blobs", "sha256");

    internal const string SetFolder = "sets", ModelFolder = "models";

    /// <summary>Hex digits of the model's hash that begin its folder's name (&lt;16 hex&gt;-&lt;recipe&gt;).</summary>
    internal const int ModelHashDigits = 16;

    public async Task<StoredArtifact> SaveAsync(Stream content, string extension, long maxBytes, string field, CancellationToken ct)
    {
        var temp = scratch.NewPath();
        string hash;
        long length = 0;
        IAsyncDisposable? hold = null;
        try
        {
            using var sha = IncrementalHash.CreateHash(HashAlgorithmName.SHA256);
            await using (var file = new FileStream(temp, FileMode.CreateNew, FileAccess.Write, FileShare.None, 1 << 16, useAsync: true))
            {
                var buffer = new byte[1 << 16];
                int n;
                while ((n = await content.ReadAsync(buffer, ct)) > 0)
                {
                    length += n;
                    if (length > maxBytes)
                        throw new Microsoft.AspNetCore.Http.BadHttpRequestException(
                            $"{field}: upload is larger than the limit of {maxBytes} bytes (AUDITSVC_MAX_UPLOAD_BYTES)", Microsoft.AspNetCore.Http.StatusCodes.Status413PayloadTooLarge);
                    sha.AppendData(buffer, 0, n);
                    await file.WriteAsync(buffer.AsMemory(0, n), ct);
                }
            }
            if (length == 0) throw new AuditInputException(field, "upload is empty");
            hash = Convert.ToHexStringLower(sha.GetHashAndReset());
            var relative = Path.Combine(BlobFolder, hash[..2], hash + extension);
            var full = Path.Combine(Root, relative);
            Directory.CreateDirectory(Path.GetDirectoryName(full)!);
            hold = await locks.HoldAsync(hash, ct);
            // Same bytes already stored: keep the first copy (a concurrent identical upload may win the move too).
            bool created = false;
            if (!File.Exists(full))
            {
                try { File.Move(temp, full, overwrite: false); created = true; }
                catch (IOException) when (File.Exists(full)) { /* a concurrent identical upload won the move */ }
            }
            var stored = new StoredArtifact("sha256:" + hash, relative, full, length, created) { Hold = hold };
            hold = null;
            return stored;
        }
        catch
        {
            if (hold is not null) await hold.DisposeAsync();
            throw;
        }
        finally
        {
            if (File.Exists(temp)) File.Delete(temp);
        }
    }

    /// <summary>
    /// Unpacks a stored zip once into sets/&lt;hash&gt;/ (via a scratch folder and a rename, so a half-written
    /// folder is never seen) with the shared, limited extractor. Returns the folder relative to the root and
    /// whether this call made it (so a rejected upload can remove what it alone left).
    /// </summary>
    public (string Relative, bool Created) Unpack(StoredArtifact zip, string field, ZipLimits limits, CancellationToken ct)
    {
        var relative = Path.Combine(SetFolder, zip.ContentHash.Replace("sha256:", "", StringComparison.Ordinal));
        var target = Path.Combine(Root, relative);
        if (Directory.Exists(target)) return (relative, false);
        var temp = scratch.NewPath();
        try
        {
            ZipExtractor.Extract(zip.FullPath, temp, limits, field, ct);
            Directory.CreateDirectory(Path.GetDirectoryName(target)!);
            try { Directory.Move(temp, target); }
            catch (IOException) when (Directory.Exists(target)) { return (relative, false); /* an identical upload unpacked first */ }
            return (relative, true);
        }
        finally
        {
            if (Directory.Exists(temp)) Directory.Delete(temp, recursive: true);
        }
    }

    /// <summary>Removes what a rejected upload alone created: its blob and its unpacked folder.</summary>
    public void Discard(StoredArtifact? blob, string? createdFolder)
    {
        if (createdFolder is not null && Directory.Exists(FullPath(createdFolder))) Directory.Delete(FullPath(createdFolder), recursive: true);
        if (blob is { Created: true } && File.Exists(blob.FullPath)) File.Delete(blob.FullPath);
    }

    /// <summary>
    /// The engine reads a model's recipe from &lt;name&gt;.recipe.json beside it, and one file may be uploaded
    /// with different recipes: each (model, recipe) pair gets a folder named by both hashes, holding a link
    /// to the stored model and the recipe text. Returns the model path in it, relative to the root, and whether
    /// this call made the folder (so a rejected upload can remove what it alone left).
    /// </summary>
    public (string Relative, bool Created) PlaceModel(StoredArtifact model, string? recipeJson)
    {
        var modelHash = model.ContentHash.Replace("sha256:", "", StringComparison.Ordinal);
        var recipeHash = recipeJson is null ? "none"
            : Convert.ToHexStringLower(SHA256.HashData(System.Text.Encoding.UTF8.GetBytes(recipeJson)))[..16];
        var relative = Path.Combine(ModelFolder, $"{modelHash[..ModelHashDigits]}-{recipeHash}", "model.onnx");
        var full = Path.Combine(Root, relative);
        if (File.Exists(full)) return (relative, false);
        var temp = scratch.NewPath();
        Directory.CreateDirectory(temp);
        try
        {
            File.CreateSymbolicLink(Path.Combine(temp, "model.onnx"), Path.GetRelativePath(Path.GetDirectoryName(full)!, model.FullPath));
            if (recipeJson is not null) File.WriteAllText(Path.Combine(temp, "model.recipe.json"), recipeJson);
            Directory.CreateDirectory(Path.GetDirectoryName(Path.GetDirectoryName(full)!)!);
            try { Directory.Move(temp, Path.GetDirectoryName(full)!); }
            catch (IOException) when (File.Exists(full)) { return (relative, false); /* placed by an identical upload */ }
            return (relative, true);
        }
        finally
        {
            if (Directory.Exists(temp)) Directory.Delete(temp, recursive: true);
        }
    }

    /// <summary>The team's drop folder: files put on the machine for a team go under incoming/&lt;team&gt;/.</summary>
    public const string Incoming = "incoming";

    /// <summary>
    /// A folder a team may register: inside its own drop folder (incoming/&lt;team&gt;/) or inside one of its own
    /// uploads (<paramref name="ownsUpload"/> asks the database). The real path, every link followed, must stay in
    /// that folder. Every refusal gives the same answer, whether the folder exists, is another team's or lies
    /// outside the root, so nothing can be learnt about what is there. Returns the path relative to the root.
    /// </summary>
    public async Task<string> ResolveTeamFolderAsync(string? relative, string? teamName, Func<string, Task<bool>> ownsUpload, string field)
    {
        if (string.IsNullOrWhiteSpace(relative)) throw new AuditInputException(field, "is required");
        var refused = new AuditInputException(field,
            $"no folder of this team at that path: register a folder under {Incoming}/<team>/ or inside the team's own uploads");
        if (Path.IsPathRooted(relative) || relative.Contains('\\', StringComparison.Ordinal)) throw refused;
        var full = Path.GetFullPath(Path.Combine(Root, relative));
        if (!full.StartsWith(Root + Path.DirectorySeparatorChar, StringComparison.Ordinal)) throw refused;
        var rel = Path.GetRelativePath(Root, full).Replace(Path.DirectorySeparatorChar, '/');
        string? owned = null;
        if (IsSafeSegment(teamName) && (rel == $"{Incoming}/{teamName}" || rel.StartsWith($"{Incoming}/{teamName}/", StringComparison.Ordinal)))
            owned = Path.Combine(Root, Incoming, teamName!);
        else if (await ownsUpload(rel))
            owned = full;
        if (owned is null) throw refused;
        var realOwned = Compute.ImageSets.PathContainment.RealPath(owned);
        var real = Compute.ImageSets.PathContainment.RealPath(full);
        if (realOwned is null || real is null || !(real == realOwned || real.StartsWith(realOwned + Path.DirectorySeparatorChar, StringComparison.Ordinal))
            || !Directory.Exists(real))
            throw refused;
        return rel;
    }

    private static bool IsSafeSegment(string? name) =>
        !string.IsNullOrEmpty(name) && name is not ("." or "..") && name.All(c => char.IsAsciiLetterOrDigit(c) || c is '-' or '_' or '.');

    public string FullPath(string relative) => Path.Combine(Root, relative);

    /// <summary>A fresh scratch path of this process, for work that is moved into place when complete.</summary>
    public string ScratchPath() => scratch.NewPath();
}
