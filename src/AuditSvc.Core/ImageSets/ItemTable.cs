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
public sealed record ImageItem(int Index, int Row, string Path, string RelativePath, int Label, int[] AttributeValues, string Sha256);

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
