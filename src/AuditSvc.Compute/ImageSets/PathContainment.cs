namespace AuditSvc.Compute.ImageSets;

/// <summary>
/// Where a manifest row really leads: every link on the way is followed (links to folders too, not only the
/// last one) and the real path must stay under one of the allowed folders. A refusal is a single answer,
/// whatever lies outside, so nothing there can be probed through intake.
/// </summary>
public sealed class PathContainment
{
    /// <summary>The one answer for every path refused as leading outside (the same text whether the target exists or not).</summary>
    public const string Refused = "path refused: it leads outside the folders this image set may read (absolute paths, '..' and links out are not allowed)";

    private const int MaxLinks = 40; // Linux's own limit on links followed in one lookup (common practice)

    private readonly string[] _roots, _realRoots;

    /// <param name="roots">Absolute folders rows may lead into. The text of a row is checked against them as given,
    /// where it really leads against their real paths (a root may itself be reached through a link).</param>
    public PathContainment(IEnumerable<string> roots)
    {
        var given = roots.Select(Path.GetFullPath).ToList();
        _roots = Folders(given);
        _realRoots = Folders(given.Select(r => RealPath(r) ?? r));
    }

    private static string[] Folders(IEnumerable<string> paths) =>
        paths.Select(r => r.TrimEnd(Path.DirectorySeparatorChar) + Path.DirectorySeparatorChar).Distinct(StringComparer.Ordinal).ToArray();

    /// <summary>
    /// The real path a row names, or null when it leads outside every allowed folder. A row is first checked as
    /// text (nothing outside is touched when the text already leaves), then link by link.
    /// </summary>
    /// <param name="baseDir">The folder relative rows start from (the manifest's).</param>
    /// <param name="row">The row's path, '/' or '\' separated.</param>
    /// <param name="allowAbsolute">Absolute rows are taken (and checked like any other) rather than refused outright.</param>
    public string? Resolve(string baseDir, string row, bool allowAbsolute)
    {
        var rel = row.Replace('\\', '/');
        if (Path.IsPathRooted(rel) && !allowAbsolute) return null;
        var full = Path.GetFullPath(Path.Combine(baseDir, rel));
        if (!Inside(_roots, full)) return null;
        var real = RealPath(full);
        return real is not null && Inside(_realRoots, real) ? real : null;
    }

    private static bool Inside(string[] roots, string full) => roots.Any(r => full.StartsWith(r, StringComparison.Ordinal));

    /// <summary>The path with every link resolved (a missing last part is kept as named); null on a link loop.</summary>
    public static string? RealPath(string fullPath)
    {
        var root = Path.GetPathRoot(fullPath) ?? "/";
        var pending = new Stack<string>(fullPath[root.Length..].Split(Path.DirectorySeparatorChar, StringSplitOptions.RemoveEmptyEntries).Reverse());
        var current = root;
        int links = 0;
        while (pending.Count > 0)
        {
            var part = pending.Pop();
            if (part == ".") continue;
            if (part == "..") { current = Path.GetDirectoryName(current) ?? root; continue; }
            var next = Path.Join(current, part);
            string? target;
            try { target = new FileInfo(next).LinkTarget; }
            catch (Exception e) when (e is IOException or UnauthorizedAccessException) { return null; }
            if (target is null) { current = next; continue; }
            if (++links > MaxLinks) return null;
            if (Path.IsPathRooted(target)) current = Path.GetPathRoot(target) ?? root;
            foreach (var p in target.Split(Path.DirectorySeparatorChar, StringSplitOptions.RemoveEmptyEntries).Reverse()) pending.Push(p);
        }
        return current;
    }
}
