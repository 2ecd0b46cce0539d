using System.Globalization;
using System.Security.Cryptography;
using AuditSvc.Compute.Imaging;
using AuditSvc.Core;
using AuditSvc.Core.ImageSets;
using CsvHelper;
using CsvHelper.Configuration;
using SixLabors.ImageSharp;

namespace AuditSvc.Compute.ImageSets;

/// <summary>
/// Reads an image set: a CSV manifest (image, label, any other column an attribute), a class-per-folder tree
/// with an optional attributes.csv, or a .zip of either. Every row and file is checked first; bad rows are
/// reported by row number and reason and skipped, never silently; a set with no usable row is an error.
/// </summary>
public static class SetIntake
{
    public const string ManifestName = "manifest.csv";
    public const string FolderAttributesName = "attributes.csv";
    private static readonly string[] ImageExtensions = [".png", ".jpg", ".jpeg", ".bmp", ".gif", ".webp", ".tga", ".tif", ".tiff"];

    /// <param name="source">A manifest CSV, a folder, or a .zip.</param>
    /// <param name="classNames">The model's class names in output order, when known: labels must be among them.</param>
    /// <param name="extractRoot">Where a .zip is unpacked (a fresh folder under it).</param>
    /// <param name="imagesRoot">
    /// A folder rows may also lead into (absolute rows included), besides the set's own folder. Null: the set's
    /// folder only, as the service always reads; the command line passes the user's --images-root.
    /// </param>
    public static ItemTable Read(string source, IReadOnlyList<string>? classNames, string extractRoot, string? imagesRoot = null)
    {
        if (imagesRoot is not null && !Directory.Exists(imagesRoot))
            throw new AuditInputException(imagesRoot, "images root: no such folder");
        var ctx = new Context(classNames, source, imagesRoot is null ? null : Path.GetFullPath(imagesRoot));
        if (File.Exists(source) && source.EndsWith(".zip", StringComparison.OrdinalIgnoreCase))
            return ReadFolderOrManifest(Unzip(source, extractRoot), ctx);
        return ReadFolderOrManifest(source, ctx);
    }

    private sealed record Context(IReadOnlyList<string>? ClassNames, string ShownSource, string? ImagesRoot);

    private static ItemTable ReadFolderOrManifest(string path, Context ctx)
    {
        if (File.Exists(path)) return FromManifest(path, ctx);
        if (!Directory.Exists(path)) throw new AuditInputException(path, "no such file or folder (expected a manifest .csv, a class-per-folder tree or a .zip)");
        var manifest = Path.Combine(path, ManifestName);
        if (File.Exists(manifest)) return FromManifest(manifest, ctx);
        var dirs = Directory.GetDirectories(path);
        if (dirs.Length == 1 && Directory.GetFiles(path).Length == 0 && File.Exists(Path.Combine(dirs[0], ManifestName)))
            return FromManifest(Path.Combine(dirs[0], ManifestName), ctx);
        return FromFolders(path, ctx);
    }

    private static string Unzip(string zip, string extractRoot)
    {
        var target = Path.Combine(extractRoot, "set-" + Path.GetFileNameWithoutExtension(zip) + "-" + Guid.NewGuid().ToString("N")[..8]);
        ZipExtractor.Extract(zip, target, new ZipLimits(), zip);
        return target;
    }

    private static ItemTable FromManifest(string manifest, Context ctx)
    {
        var dir = Path.GetDirectoryName(Path.GetFullPath(manifest))!;
        var rows = new List<RawRow>();
        string[] header;
        try
        {
            using var reader = new StreamReader(manifest);
            using var csv = new CsvReader(reader, IntakeLimits.Csv());
            if (!csv.Read() || !csv.ReadHeader() || csv.HeaderRecord is null)
                throw new AuditInputException(manifest, "empty manifest: expected a header with columns 'image' and 'label'");
            header = csv.HeaderRecord;
            IntakeLimits.CheckHeader(manifest, header);
            int imageCol = Array.FindIndex(header, h => h.Equals("image", StringComparison.OrdinalIgnoreCase));
            int labelCol = Array.FindIndex(header, h => h.Equals("label", StringComparison.OrdinalIgnoreCase));
            if (imageCol < 0) throw new AuditInputException(manifest, "header has no 'image' column (the image path relative to the manifest)");
            if (labelCol < 0) throw new AuditInputException(manifest, "header has no 'label' column");
            var attrCols = Enumerable.Range(0, header.Length).Where(i => i != imageCol && i != labelCol).ToArray();
            var dup = attrCols.GroupBy(i => header[i], StringComparer.OrdinalIgnoreCase).FirstOrDefault(g => g.Count() > 1 || string.IsNullOrWhiteSpace(g.Key));
            if (dup is not null) throw new AuditInputException(manifest, $"column name '{dup.Key}' is empty or repeated");
            int row = 0;
            while (csv.Read())
            {
                IntakeLimits.CheckRows(manifest, ++row);
                var cells = Enumerable.Range(0, header.Length).Select(i => csv.TryGetField<string>(i, out var s) ? s ?? "" : "").ToArray();
                rows.Add(new RawRow(row, cells[imageCol], cells[labelCol], attrCols.Select(i => cells[i]).ToArray()));
            }
            return Build(dir, ctx, rows, attrCols.Select(i => header[i]).ToArray());
        }
        catch (CsvHelperException e)
        {
            throw new AuditInputException(manifest, $"not a readable CSV file ({e.Message.Split('\n')[0]})", e);
        }
    }

    private static ItemTable FromFolders(string root, Context ctx)
    {
        var rows = new List<RawRow>();
        int row = 0;
        foreach (var labelDir in Directory.GetDirectories(root).OrderBy(d => d, StringComparer.Ordinal))
        {
            var label = Path.GetFileName(labelDir);
            foreach (var file in FilesUnder(labelDir))
            {
                if (!ImageExtensions.Contains(Path.GetExtension(file).ToLowerInvariant())) continue;
                IntakeLimits.CheckRows(root, ++row);
                rows.Add(new RawRow(row, Path.GetRelativePath(root, file).Replace('\\', '/'), label, []));
            }
        }
        if (rows.Count == 0) throw new AuditInputException(root, $"no {ManifestName} and no class folders with images");
        string[] names = [];
        var attrFile = Path.Combine(root, FolderAttributesName);
        if (File.Exists(attrFile))
        {
            var table = ReadAttributeTable(attrFile);
            names = table.Names;
            rows = rows.Select(r => r with { Attributes = table.Rows.TryGetValue(r.Image, out var v) ? v : new string[names.Length] }).ToList();
        }
        return Build(root, ctx, rows, names);
    }

    // Files of a class folder, not descending into linked folders: a link loop would list the same images
    // again and again (a linked file is listed, and intake checks where it leads like any row).
    private static IEnumerable<string> FilesUnder(string dir) =>
        new System.IO.Enumeration.FileSystemEnumerable<string>(dir, (ref System.IO.Enumeration.FileSystemEntry e) => e.ToFullPath(),
            new EnumerationOptions { RecurseSubdirectories = true, AttributesToSkip = 0 })
        {
            ShouldIncludePredicate = (ref System.IO.Enumeration.FileSystemEntry e) => !e.IsDirectory,
            ShouldRecursePredicate = (ref System.IO.Enumeration.FileSystemEntry e) => (e.Attributes & FileAttributes.ReparsePoint) == 0,
        }.Order(StringComparer.Ordinal);

    private static (string[] Names, Dictionary<string, string[]> Rows) ReadAttributeTable(string file)
    {
        try { return ReadAttributeRows(file); }
        catch (CsvHelperException e) { throw new AuditInputException(file, $"not a readable CSV file ({e.Message.Split('\n')[0]})", e); }
    }

    private static (string[] Names, Dictionary<string, string[]> Rows) ReadAttributeRows(string file)
    {
        using var reader = new StreamReader(file);
        using var csv = new CsvReader(reader, IntakeLimits.Csv());
        if (!csv.Read() || !csv.ReadHeader() || csv.HeaderRecord is null) throw new AuditInputException(file, "empty attribute file");
        var header = csv.HeaderRecord;
        IntakeLimits.CheckHeader(file, header);
        int imageCol = Array.FindIndex(header, h => h.Equals("image", StringComparison.OrdinalIgnoreCase));
        if (imageCol < 0) throw new AuditInputException(file, "header has no 'image' column (path relative to the set's folder)");
        var cols = Enumerable.Range(0, header.Length).Where(i => i != imageCol).ToArray();
        var rows = new Dictionary<string, string[]>(StringComparer.Ordinal);
        while (csv.Read())
        {
            IntakeLimits.CheckRows(file, rows.Count + 1);
            var image = (csv.GetField(imageCol) ?? "").Replace('\\', '/');
            rows[image] = cols.Select(i => csv.TryGetField<string>(i, out var s) ? s ?? "" : "").ToArray();
        }
        return (cols.Select(i => header[i]).ToArray(), rows);
    }

    private sealed record RawRow(int Row, string Image, string Label, string?[] Attributes);

    private static ItemTable Build(string dir, Context ctx, List<RawRow> rows, string[] attrNames)
    {
        var (source, classNames) = (ctx.ShownSource, ctx.ClassNames);
        var problems = new List<IntakeProblem>();
        var labels = classNames?.ToList() ?? InferLabels(rows);
        if (labels.GroupBy(l => l, StringComparer.Ordinal).FirstOrDefault(g => g.Count() > 1) is { } twice)
            throw new AuditInputException("class names", $"'{twice.Key}' is given {twice.Count()} times (--labels or class_names in the model's recipe): each output needs its own name");
        var labelIndex = labels.Select((l, i) => (l, i)).ToDictionary(t => t.l, t => t.i, StringComparer.Ordinal);
        var seen = new HashSet<string>(StringComparer.Ordinal);
        var candidates = new List<(RawRow Row, string Full, string Real, int Label)>();
        // Rows name files inside the set's folder (or the images root the user named): an absolute path, ".." or a
        // link must not reach another set's images or anything else on the machine. One answer for every refusal,
        // so it says nothing about what exists outside.
        var containment = new PathContainment(ctx.ImagesRoot is null ? [dir] : [dir, ctx.ImagesRoot]);
        foreach (var r in rows)
        {
            if (string.IsNullOrWhiteSpace(r.Image)) { problems.Add(new(r.Row, "", "empty 'image' cell")); continue; }
            var rel = r.Image.Replace('\\', '/');
            if (containment.Resolve(dir, rel, allowAbsolute: ctx.ImagesRoot is not null) is not { } real)
            {
                problems.Add(new(r.Row, rel, PathContainment.Refused));
                continue;
            }
            var full = Path.GetFullPath(Path.Combine(dir, rel));
            if (string.Equals(real, full, StringComparison.Ordinal)) real = full; // one string, not two, while intake runs
            // Duplicates by where the path really leads: two spellings or a link to a listed file are one image.
            if (!seen.Add(real)) { problems.Add(new(r.Row, rel, "duplicate path (already listed on an earlier row)")); continue; }
            if (string.IsNullOrWhiteSpace(r.Label)) { problems.Add(new(r.Row, rel, "empty 'label' cell")); continue; }
            if (!labelIndex.TryGetValue(r.Label, out int li))
            {
                problems.Add(new(r.Row, rel, $"unknown label '{r.Label}' (the model's classes: {string.Join(", ", labels)})"));
                continue;
            }
            candidates.Add((r, full, real, li));
        }
        // File checks (exists, decodable header) and hashes in parallel; order is kept.
        var checkedRows = new (byte[]? Hash, string? Problem)[candidates.Count];
        Parallel.For(0, candidates.Count, i => checkedRows[i] = CheckFile(candidates[i].Real));
        var attrCells = new List<string?[]>();
        var kept = new List<(RawRow Row, string Full, int Label, byte[] Hash)>();
        for (int i = 0; i < candidates.Count; i++)
        {
            var (r, full, _, li) = candidates[i];
            if (checkedRows[i].Problem is { } why) { problems.Add(new(r.Row, r.Image, why)); continue; }
            kept.Add((r, full, li, checkedRows[i].Hash!));
            attrCells.Add(r.Attributes);
        }
        if (kept.Count == 0)
            throw new AuditInputException(source, $"no usable rows ({rows.Count} read, {problems.Count} rejected{(problems.Count > 0 ? "; first: row " + problems[0].Row + " " + problems[0].File + ": " + problems[0].Reason : "")})");
        var columns = AttributeBinning.Build(attrNames, attrCells, out var codes, out var skipped);
        problems.AddRange(skipped.Select(s => new IntakeProblem(null, s.Column, s.Reason)));
        var folder = Path.TrimEndingDirectorySeparator(Path.GetFullPath(dir)); // one string shared by the set's items
        var items = kept.Select((k, i) => IsInFolder(k.Full, folder, k.Row.Image)
            ? ImageItem.InFolder(i, k.Row.Row, folder, k.Row.Image, k.Label, codes[i], k.Hash)
            : new ImageItem(i, k.Row.Row, k.Full, k.Row.Image, k.Label, codes[i], Convert.ToHexStringLower(k.Hash))).ToList();
        var report = new IntakeReport(source, rows.Count, items.Count, IntakeLimits.Capped(problems.OrderBy(p => p.Row ?? 0).ToList()));
        return new ItemTable(labels, columns, items, report);
    }

    // The common row: its file is the set's folder, '/', and the row's own path; the item then keeps only the row's path.
    private static bool IsInFolder(string full, string dir, string image) =>
        full.Length == dir.Length + 1 + image.Length && full.StartsWith(dir, StringComparison.Ordinal) && full[dir.Length] == '/'
        && full.EndsWith(image, StringComparison.Ordinal);

    private static List<string> InferLabels(List<RawRow> rows)
    {
        var distinct = rows.Select(r => r.Label).Where(l => !string.IsNullOrWhiteSpace(l)).Distinct(StringComparer.Ordinal).ToList();
        // Integer labels are class indices; anything else needs the class names (--labels or the recipe).
        if (distinct.All(l => int.TryParse(l, NumberStyles.None, CultureInfo.InvariantCulture, out _)))
        {
            int max = distinct.Count == 0 ? -1 : distinct.Max(l => int.Parse(l, CultureInfo.InvariantCulture));
            return Enumerable.Range(0, max + 1).Select(i => i.ToString(CultureInfo.InvariantCulture)).ToList();
        }
        throw new AuditInputException("label", $"labels are names ({string.Join(", ", distinct.Take(5))}…) but the model's class names are unknown: give --labels in output order or class_names in the model's recipe file");
    }

    /// <summary>Largest image file intake reads (a bound on what one row can make the service read).</summary>
    public const long MaxFileBytes = 256L << 20;

    /// <param name="real">The row's real path (links resolved), already known to be inside an allowed folder.</param>
    private static (byte[]? Hash, string? Problem) CheckFile(string real)
    {
        FileInfo info;
        try
        {
            info = new FileInfo(real);
            if (!info.Exists) return (null, "file not found");
            // FIFOs, devices and sockets report no length: refusing length 0 before opening keeps a FIFO from
            // hanging intake and /dev/zero from filling memory.
            if (info.Length == 0) return (null, "empty file or not a regular file");
            if (info.Length > MaxFileBytes) return (null, $"file is larger than {MaxFileBytes >> 20} MiB");
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            return (null, $"cannot read the file ({e.GetType().Name})");
        }
        try
        {
            // Streamed: the header is identified (size checked before any pixel is decoded), then the file is
            // hashed from the same stream, never read whole; a JPEG is checked for an end after its last scan.
            // A small stream buffer (the decoder's identify step buffers its own reads) and a pooled hash buffer: intake
            // otherwise allocated 128 KB an image (26 GB over 200,000 images), all garbage.
            using var stream = new FileStream(info.FullName, FileMode.Open, FileAccess.Read, FileShare.Read, 4096);
            if (AnimatedWebp.Problem(stream) is { } animated) return (null, animated);
            var image = Image.Identify(ImageDecoding.Configuration, stream, out var format);
            if (image is null) return (null, "not a decodable image (unknown format)");
            if (ImageDecoding.SizeProblem(image) is { } tooLarge) return (null, tooLarge);
            stream.Position = 0;
            var jpeg = format is SixLabors.ImageSharp.Formats.Jpeg.JpegFormat ? new JpegCompleteness() : null;
            using var sha = IncrementalHash.CreateHash(HashAlgorithmName.SHA256);
            var buffer = System.Buffers.ArrayPool<byte>.Shared.Rent(64 * 1024);
            try
            {
                int n;
                while ((n = stream.Read(buffer, 0, 64 * 1024)) > 0)
                {
                    sha.AppendData(buffer, 0, n);
                    jpeg?.Feed(buffer.AsSpan(0, n));
                }
            }
            finally
            {
                System.Buffers.ArrayPool<byte>.Shared.Return(buffer);
            }
            if (jpeg is { Complete: false }) return (null, "truncated JPEG (the file ends inside its image data)");
            return (sha.GetHashAndReset(), null);
        }
        catch (Exception e) when (e is UnknownImageFormatException or InvalidImageContentException or NotSupportedException or IOException or UnauthorizedAccessException)
        {
            return (null, $"not a decodable image ({e.GetType().Name}: {e.Message.Split('\n')[0]})");
        }
    }
}
