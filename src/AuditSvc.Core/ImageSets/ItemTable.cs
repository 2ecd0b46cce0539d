namespace AuditSvc.Core.ImageSets;

/// <summary>An attribute column. Values are categorical; numeric columns are binned at intake.</summary>
/// <param name="Name">Column name.</param>
/// <param name="Values">The distinct values (bins for numeric columns), in a stable order.</param>
/// <param name="Numeric">True when the column was numeric and binned.</param>
public sealed record AttributeColumn(string Name, IReadOnlyList<string> Values, bool Numeric);

/// <summary>
/// One usable image. <see cref="AttributeValues"/> holds, per column of the table, the index into that
/// column's values, or -1 when the cell is missing.
/// </summary>
/// <remarks>
/// An audit holds one of these per image for its whole run, so it is kept small (about 250 bytes for a typical row
/// instead of 450): a path that is the set's folder, '/', and the row's path is made on demand from the one folder
/// string the set's items share, and a hash of 64 hex digits is kept as its 32 bytes and written out on demand.
/// </remarks>
public sealed record ImageItem
{
    private readonly string? _path;
    private readonly string? _folder;
    private readonly byte[]? _hash;
    private readonly string? _hashText;

    /// <param name="Index">Position in the item table.</param>
    /// <param name="Row">The row of the set it came from (1-based data row).</param>
    /// <param name="Path">Where the file is.</param>
    /// <param name="RelativePath">The row's path as the set gave it.</param>
    /// <param name="Label">Index of its label.</param>
    /// <param name="AttributeValues">Per column, the value's index or -1.</param>
    /// <param name="Sha256">The file's SHA-256 in hex (any text is kept as it is).</param>
    public ImageItem(int Index, int Row, string Path, string RelativePath, int Label, int[] AttributeValues, string Sha256)
        : this(Index, Row, RelativePath, Label, AttributeValues, Path, null, null, null)
    {
        if (Sha256.Length == 64 && IsLowerHex(Sha256)) _hash = Convert.FromHexString(Sha256);
        else _hashText = Sha256;
    }

    private ImageItem(int index, int row, string relativePath, int label, int[] attributeValues, string? path, string? folder, byte[]? hash, string? hashText)
    {
        Index = index;
        Row = row;
        RelativePath = relativePath;
        Label = label;
        AttributeValues = attributeValues;
        _path = path;
        _folder = folder;
        _hash = hash;
        _hashText = hashText;
    }

    /// <summary>
    /// An image whose file is <paramref name="folder"/> + '/' + <paramref name="relativePath"/>: only the row's path is
    /// kept (pass the same folder string for every item of a set), and the SHA-256 as its bytes.
    /// </summary>
    public static ImageItem InFolder(int index, int row, string folder, string relativePath, int label, int[] attributeValues, byte[] sha256) =>
        new(index, row, relativePath, label, attributeValues, null, folder, sha256.Length == 32 ? sha256 : throw new ArgumentException("a SHA-256 is 32 bytes", nameof(sha256)), null);

    public int Index { get; init; }

    public int Row { get; init; }

    /// <summary>Where the file is (made on demand for items of <see cref="InFolder"/>).</summary>
    public string Path => _path ?? string.Concat(_folder, "/", RelativePath);

    public string RelativePath { get; init; }

    public int Label { get; init; }

    public int[] AttributeValues { get; init; }

    /// <summary>The file's SHA-256, lower-case hex.</summary>
    public string Sha256 => _hash is not null ? Convert.ToHexStringLower(_hash) : _hashText ?? "";

    private static bool IsLowerHex(string s)
    {
        foreach (char c in s)
            if (c is not ((>= '0' and <= '9') or (>= 'a' and <= 'f'))) return false;
        return true;
    }
}

/// <summary>A problem found at intake: the row (1-based data row, header excluded) or file, and why.</summary>
public sealed record IntakeProblem(int? Row, string File, string Reason);

/// <summary>What intake read and what it skipped.</summary>
public sealed record IntakeReport(string Source, int RowsRead, int RowsUsed, IReadOnlyList<IntakeProblem> Problems);

/// <summary>The image set after intake.</summary>
public sealed record ItemTable(
    IReadOnlyList<string> Labels,
    IReadOnlyList<AttributeColumn> Attributes,
    IReadOnlyList<ImageItem> Items,
    IntakeReport Report)
{
    /// <summary>
    /// The name of a model output: the set's label of that index, else "output N". A model may have more outputs than
    /// the set has labels (a 1,000-way network audited on a 3-label set), and a cue may push decisions toward any of them.
    /// </summary>
    public string ClassName(int index) =>
        index >= 0 && index < Labels.Count ? Labels[index] : $"output {index.ToString(System.Globalization.CultureInfo.InvariantCulture)}";
}
