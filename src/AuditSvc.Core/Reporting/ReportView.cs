using System.Text;

namespace AuditSvc.Core.Reporting;

/// <summary>
/// What a host adds to the report's decision view: links to unit pages, and what sits at the foot of each cue card
/// (the service puts the review control there). The self-contained report.html uses <see cref="Standalone"/>.
/// </summary>
public sealed record ReportView
{
    public static readonly ReportView Standalone = new();

    /// <summary>The page of one unit (layer tensor, channel), or null when there is none.</summary>
    public Func<string, int, string?>? UnitHref { get; init; }

    /// <summary>HTML placed at the foot of a cue card (already escaped by the host).</summary>
    public Func<CueCard, string>? CardFooter { get; init; }
}

/// <summary>
/// Pictures in one page. A URL becomes an &lt;img&gt; that loads lazily; an embedded data URI is written once, as a
/// CSS class, however many times the page shows it (a unit's exemplars appear on its cue card and among the findings).
/// </summary>
internal sealed class Pictures
{
    private readonly Dictionary<string, int> _inline = new(StringComparer.Ordinal);

    public string Tag(string src, string alt, string? cssClass = null)
    {
        if (!src.StartsWith("data:", StringComparison.Ordinal))
            return $"<img loading=\"lazy\" src=\"{HtmlText.E(src)}\" alt=\"{HtmlText.E(alt)}\"{(cssClass is null ? "" : $" class=\"{cssClass}\"")}>";
        if (!_inline.TryGetValue(src, out var n)) _inline[src] = n = _inline.Count;
        return $"<span role=\"img\" aria-label=\"{HtmlText.E(alt)}\" class=\"pic p{n}{(cssClass is null ? "" : " " + cssClass)}\"></span>";
    }

    /// <summary>The style rules that carry the embedded pictures; empty when there are none.</summary>
    public string Styles()
    {
        if (_inline.Count == 0) return "";
        var sb = new StringBuilder(_inline.Keys.Sum(k => k.Length + 40));
        foreach (var (src, n) in _inline) sb.Append(".p").Append(n).Append("{background-image:url(").Append(src).Append(")}\n");
        return sb.ToString();
    }
}
