using System.Globalization;
using System.Net;

namespace AuditSvc.Core.Reporting;

/// <summary>Escaping and number formatting for the report; every string from data goes through <see cref="E"/>.</summary>
internal static class HtmlText
{
    private static readonly CultureInfo Inv = CultureInfo.InvariantCulture;

    public const string Dash = "—";

    /// <summary>HTML-escapes text for element content and quoted attribute values (&lt; &gt; &amp; " ').</summary>
    public static string E(string? s) => s is null ? "" : WebUtility.HtmlEncode(s);

    public static string Num(double? v, int digits = 2)
    {
        if (v is not { } x || double.IsNaN(x)) return Dash;
        if (double.IsPositiveInfinity(x)) return "∞";
        if (double.IsNegativeInfinity(x)) return "−∞";
        return x.ToString("F" + digits.ToString(Inv), Inv);
    }

    /// <summary>p- and q-values: three decimals down to 0.001, scientific below.</summary>
    public static string P(double? v)
    {
        if (v is not { } x || double.IsNaN(x)) return Dash;
        if (x == 0) return "0";
        return x >= 0.001 ? x.ToString("0.000", Inv) : x.ToString("0.0e+0", Inv);
    }

    public static string Pct(double? v, int digits = 0)
    {
        if (v is not { } x || !double.IsFinite(x)) return Dash;
        return (x * 100).ToString("F" + digits.ToString(Inv), Inv) + "%";
    }

    public static string Int(long v) => v.ToString("N0", Inv);

    public static string Interval(double low, double high) =>
        double.IsNaN(low) || double.IsNaN(high) ? Dash : $"{Num(low)} – {Num(high)}";

    /// <summary>A CSS width in percent for a 0..1 value, clamped.</summary>
    public static string Width(double? v) =>
        (v is { } x && double.IsFinite(x) ? Math.Clamp(x, 0, 1) * 100 : 0).ToString("0.#", Inv) + "%";

    public static string Class(string verdict) => verdict switch
    {
        "pass" => "v-pass",
        "block" => "v-block",
        "warn" => "v-warn",
        _ => "v-other",
    };

    public static string Short(string hash, int n = 12) => hash.Length <= n ? hash : hash[..n];
}
