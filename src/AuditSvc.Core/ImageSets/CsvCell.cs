using System.Globalization;

namespace AuditSvc.Core.ImageSets;

/// <summary>
/// Cells of every CSV file auditsvc writes. A cell starting with '=', '+', '-', '@', a tab or a carriage return is
/// run as a formula by spreadsheet programs, so such a cell gets a leading apostrophe (OWASP's "CSV Injection"
/// guidance, recalled from memory) unless it is a plain number like -0.25; cells with a comma, quote or line break
/// are quoted (RFC 4180).
/// </summary>
public static class CsvCell
{
    /// <summary>The cell as it is written: neutralised, then quoted when needed.</summary>
    public static string Safe(string? value)
    {
        var v = value ?? "";
        if (v.Length > 0 && v[0] is '=' or '+' or '-' or '@' or '\t' or '\r'
            && !double.TryParse(v, NumberStyles.Float, CultureInfo.InvariantCulture, out _))
            v = "'" + v;
        return v.AsSpan().IndexOfAny(",\"\r\n") >= 0 ? "\"" + v.Replace("\"", "\"\"", StringComparison.Ordinal) + "\"" : v;
    }

    /// <summary>One line of safe cells, comma-separated, without its line break.</summary>
    public static string Line(IEnumerable<string?> cells) => string.Join(',', cells.Select(Safe));
}
