using System.Globalization;
using AuditSvc.Core;
using AuditSvc.Core.ImageSets;
using CsvHelper.Configuration;

namespace AuditSvc.Compute.ImageSets;

/// <summary>Bounds on what a manifest may make intake hold, and how its problems are listed.</summary>
public static class IntakeLimits
{
    /// <summary>Columns in a manifest or attribute file (the image, the label and attributes).</summary>
    public const int MaxColumns = 512;

    /// <summary>Rows in one image set.</summary>
    public const int MaxRows = 2_000_000;

    /// <summary>Characters in one cell.</summary>
    public const int MaxCellChars = 16 * 1024;

    /// <summary>Problems listed one by one in the intake report; the rest are counted by reason.</summary>
    public const int MaxProblemsListed = 1000;

    /// <summary>
    /// How manifests are read: the separator is detected among ',', ';', tab and '|' (spreadsheets in many locales
    /// write ';'); a byte-order mark is skipped; quoted cells may hold separators and line breaks.
    /// </summary>
    public static CsvConfiguration Csv() => new(CultureInfo.InvariantCulture)
    {
        TrimOptions = TrimOptions.Trim,
        BadDataFound = null,
        MissingFieldFound = null,
        DetectColumnCountChanges = false,
        DetectDelimiter = true,
        DetectDelimiterValues = [",", ";", "\t", "|"],
        MaxFieldSize = MaxCellChars,
    };

    public static void CheckHeader(string file, string[] header)
    {
        if (header.Length > MaxColumns)
            throw new AuditInputException(file, $"header has {header.Length} columns, more than the limit of {MaxColumns}");
    }

    public static void CheckRows(string file, int rows)
    {
        if (rows > MaxRows) throw new AuditInputException(file, $"more than the limit of {MaxRows} rows");
    }

    /// <summary>The first <see cref="MaxProblemsListed"/> problems, then one line per reason counting the rest.</summary>
    public static List<IntakeProblem> Capped(IReadOnlyList<IntakeProblem> problems)
    {
        if (problems.Count <= MaxProblemsListed) return [.. problems];
        var listed = problems.Take(MaxProblemsListed).ToList();
        foreach (var g in problems.Skip(MaxProblemsListed).GroupBy(p => Kind(p.Reason)).OrderByDescending(g => g.Count()))
            listed.Add(new IntakeProblem(null, "", $"{g.Count()} more rows not listed: {g.Key}"));
        return listed;
    }

    // "not a decodable image (InvalidImageContentException: …)" and "unknown label 'x' (…)" count under their first words.
    private static string Kind(string reason)
    {
        int cut = reason.IndexOfAny(['(', ':', '\'']);
        return (cut > 0 ? reason[..cut] : reason).Trim();
    }
}
