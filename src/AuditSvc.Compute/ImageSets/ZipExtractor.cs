using System.IO.Compression;
using AuditSvc.Core;

namespace AuditSvc.Compute.ImageSets;

/// <summary>Bounds on what one archive may unpack to. Defaults fit large image sets and stop bombs.</summary>
/// <param name="MaxEntries">Entries (files and folders) in one archive.</param>
/// <param name="MaxTotalBytes">Bytes all files unpack to together.</param>
/// <param name="MaxEntryBytes">Bytes one file unpacks to (intake reads no larger image either).</param>
/// <param name="MaxRatio">Unpacked / packed size of one file; images barely compress, so a high ratio is a bomb.</param>
/// <param name="RatioFreeBytes">Files up to this size are not held to <paramref name="MaxRatio"/> (a small CSV compresses well).</param>
public sealed record ZipLimits(
    int MaxEntries = 250_000,
    long MaxTotalBytes = 20L << 30,
    long MaxEntryBytes = SetIntake.MaxFileBytes,
    double MaxRatio = 100,
    long RatioFreeBytes = 1L << 20);

/// <summary>
/// The one extractor for image-set archives (command line and service). Every entry is checked before its bytes
/// are written: names that are absolute, hold '..' or a drive, links and other special entries, encrypted or
/// unsupported compression (only stored and deflate), duplicates, a file where a folder is needed; sizes are
/// counted as bytes come out, not trusted from the headers. Any refusal removes the whole target folder.
/// </summary>
public static class ZipExtractor
{
    private const int UnixTypeMask = 0xF000, UnixFile = 0x8000, UnixDir = 0x4000;

    /// <summary>Unpacks <paramref name="zipPath"/> into <paramref name="target"/> (which must not exist yet).</summary>
    /// <param name="shown">How the archive is named in errors (a path for the CLI, a form field for the service).</param>
    /// <returns>The number of files written.</returns>
    public static int Extract(string zipPath, string target, ZipLimits limits, string shown, CancellationToken ct = default)
    {
        if (Directory.Exists(target) || File.Exists(target)) throw new IOException($"extraction target exists: {target}");
        Directory.CreateDirectory(target);
        try
        {
            return ExtractInto(zipPath, Path.GetFullPath(target), limits, shown, ct);
        }
        catch
        {
            Directory.Delete(target, recursive: true);
            throw;
        }
    }

    private static int ExtractInto(string zipPath, string target, ZipLimits limits, string shown, CancellationToken ct)
    {
        ZipArchive archive;
        try { archive = ZipFile.OpenRead(zipPath); }
        catch (InvalidDataException e) { throw new AuditInputException(shown, "not a readable .zip archive", e); }
        using (archive)
        {
            if (archive.Entries.Count > limits.MaxEntries)
                throw new AuditInputException(shown, $"{archive.Entries.Count} entries, more than the limit of {limits.MaxEntries}");
            var plan = Plan(archive, limits, shown);
            long total = 0;
            var buffer = new byte[1 << 16];
            foreach (var (entry, rel) in plan)
            {
                ct.ThrowIfCancellationRequested();
                var dest = Path.Combine(target, rel);
                if (entry is null) { Directory.CreateDirectory(dest); continue; }
                Directory.CreateDirectory(Path.GetDirectoryName(dest)!);
                total += Copy(entry, dest, limits, limits.MaxTotalBytes - total, buffer, $"{shown}: {entry.FullName}", ct);
            }
            return plan.Count(p => p.Entry is not null);
        }
    }

    /// <summary>Checks every entry's name, kind and declared size; returns the entries to write (null entry: a folder).</summary>
    private static List<(ZipArchiveEntry? Entry, string Relative)> Plan(ZipArchive archive, ZipLimits limits, string shown)
    {
        var files = new HashSet<string>(StringComparer.Ordinal);
        var folders = new HashSet<string>(StringComparer.Ordinal);
        var plan = new List<(ZipArchiveEntry?, string)>();
        long declared = 0;
        foreach (var entry in archive.Entries)
        {
            var subject = $"{shown}: {entry.FullName}";
            bool isFolder = entry.FullName.EndsWith('/') || entry.FullName.EndsWith('\\');
            var rel = SafeRelative(entry.FullName) ?? throw new AuditInputException(subject, "entry name leads outside the archive's folder (absolute, '..', a drive or an empty name)");
            int unixType = (entry.ExternalAttributes >> 16) & UnixTypeMask;
            if (unixType != 0 && unixType != UnixFile && unixType != UnixDir)
                throw new AuditInputException(subject, "entry is a link or a special file; archives may hold files and folders only");
            if (entry.IsEncrypted) throw new AuditInputException(subject, "entry is encrypted");
            var parts = rel.Split('/');
            for (int i = 1; i < parts.Length + (isFolder ? 1 : 0); i++)
            {
                var parent = string.Join('/', parts[..i]);
                if (files.Contains(parent)) throw new AuditInputException(subject, $"'{parent}' is both a file and a folder in the archive");
                folders.Add(parent);
            }
            if (isFolder) { plan.Add((null, rel)); continue; }
            if (folders.Contains(rel)) throw new AuditInputException(subject, $"'{rel}' is both a file and a folder in the archive");
            if (!files.Add(rel)) throw new AuditInputException(subject, "entry appears twice in the archive");
            if (entry.Length > limits.MaxEntryBytes)
                throw new AuditInputException(subject, $"unpacks to {entry.Length} bytes, more than the limit of {limits.MaxEntryBytes} per file");
            if (entry.Length > limits.RatioFreeBytes && entry.Length > limits.MaxRatio * Math.Max(1, entry.CompressedLength))
                throw new AuditInputException(subject, $"compressed more than {limits.MaxRatio}:1 ({entry.CompressedLength} to {entry.Length} bytes): refused as a likely archive bomb");
            declared += entry.Length;
            if (declared > limits.MaxTotalBytes)
                throw new AuditInputException(shown, $"unpacks to more than the limit of {limits.MaxTotalBytes} bytes");
            plan.Add((entry, rel));
        }
        if (files.Count == 0) throw new AuditInputException(shown, "the archive holds no files");
        return plan;
    }

    /// <summary>The entry's path with '/' separators when it stays inside; null when it would not.</summary>
    private static string? SafeRelative(string name)
    {
        var n = name.Replace('\\', '/').TrimEnd('/');
        if (n.Length == 0 || n.StartsWith('/') || n.Contains('\0', StringComparison.Ordinal) || n.Contains(':', StringComparison.Ordinal)) return null;
        var parts = n.Split('/');
        if (parts.Any(p => p is "" or "." or "..")) return null;
        return n;
    }

    private static long Copy(ZipArchiveEntry entry, string dest, ZipLimits limits, long totalLeft, byte[] buffer, string subject, CancellationToken ct)
    {
        Stream source;
        try { source = entry.Open(); }
        catch (Exception e) when (e is InvalidDataException or NotSupportedException)
        {
            throw new AuditInputException(subject, $"cannot be unpacked ({e.Message.Split('\n')[0]}); only stored and deflate entries are supported", e);
        }
        long written = 0;
        long cap = Math.Min(Math.Min(entry.Length, limits.MaxEntryBytes), totalLeft);
        using (source)
        using (var file = new FileStream(dest, FileMode.CreateNew, FileAccess.Write, FileShare.None, 1 << 16))
        {
            int n;
            try
            {
                while ((n = source.Read(buffer, 0, buffer.Length)) > 0)
                {
                    ct.ThrowIfCancellationRequested();
                    written += n;
                    // Headers can lie: what comes out is counted, and more than the entry declared is refused.
                    if (written > cap)
                        throw new AuditInputException(subject, written > entry.Length ? "unpacks to more bytes than its header declares" : "unpacks past the archive's size limits");
                    file.Write(buffer, 0, n);
                }
            }
            catch (InvalidDataException e)
            {
                throw new AuditInputException(subject, $"corrupt compressed data ({e.Message.Split('\n')[0]})", e);
            }
        }
        return written;
    }
}
