using System.Globalization;

namespace AuditSvc.Cli.Scenarios;

/// <summary>Where a stamp sits: a corner or the middle of the top or bottom edge.</summary>
public enum StampPlace
{
    TopLeft,
    TopRight,
    BottomLeft,
    BottomRight,
    TopCentre,
    BottomCentre,
}

/// <summary>
/// A planted cue: one parameterised family per kind. Each names the attribute column it is written to and the
/// column's values with and without the cue.
/// </summary>
public abstract record Cue(string Kind, string Column, string Present, string Absent)
{
    /// <summary>The cue's parameters in one token (no spaces), for listings.</summary>
    public abstract string Describe();

    protected static string F(double v) => v.ToString("0.##", CultureInfo.InvariantCulture);
}

/// <summary>A burned-in overlay: a dark strip carrying a bright lot code, <paramref name="Width"/>×<paramref name="Height"/> px.</summary>
public sealed record StampCue(int Width, int Height, StampPlace Place) : Cue("stamp", "stamp", "yes", "no")
{
    /// <summary>One pixel from the image edge so the whole strip stays inside the picture.</summary>
    public const int Margin = 1;

    public (int X, int Y) Origin(int size) => Place switch
    {
        StampPlace.TopLeft => (Margin, Margin),
        StampPlace.TopRight => (size - Margin - Width, Margin),
        StampPlace.BottomLeft => (Margin, size - Margin - Height),
        StampPlace.BottomRight => (size - Margin - Width, size - Margin - Height),
        StampPlace.TopCentre => ((size - Width) / 2, Margin),
        _ => ((size - Width) / 2, size - Margin - Height),
    };

    public override string Describe() => $"{Width}x{Height}@{PlaceName}";

    /// <summary>The place in words: top-left, bottom-centre and so on.</summary>
    public string PlaceName => Place switch
    {
        StampPlace.TopLeft => "top-left",
        StampPlace.TopRight => "top-right",
        StampPlace.BottomLeft => "bottom-left",
        StampPlace.BottomRight => "bottom-right",
        StampPlace.TopCentre => "top-centre",
        _ => "bottom-centre",
    };
}

/// <summary>A coloured frame <paramref name="Width"/> px wide around the whole image.</summary>
public sealed record BorderCue(int Width, byte R, byte G, byte B) : Cue("border", "frame", "yes", "no")
{
    public override string Describe() => $"{Width}px-rgb({R},{G},{B})";
}

/// <summary>A global colour cast: every channel multiplied by a gain and shifted by an offset (0..255 levels).</summary>
public sealed record CastCue(string Name, float GainR, float GainG, float GainB, float ShiftR, float ShiftG, float ShiftB)
    : Cue("cast", "cast", Name, "none")
{
    public override string Describe() =>
        $"gain({F(GainR)},{F(GainG)},{F(GainB)})+shift({F(ShiftR)},{F(ShiftG)},{F(ShiftB)})";
}

/// <summary>Stripes across the conveyor behind the tile instead of a plain belt.</summary>
public sealed record BackdropCue(float Amplitude, int PeriodMin, int PeriodMax) : Cue("backdrop", "backdrop", "striped", "plain")
{
    public override string Describe() => $"stripes-amp{F(Amplitude)}-period{PeriodMin}..{PeriodMax}";
}

/// <summary>Images from a source whose optics blur slightly (Gaussian, sigma in pixels).</summary>
public sealed record BlurCue(float Sigma) : Cue("blur", "source", "blurred", "sharp")
{
    public override string Describe() => $"gaussian-sigma{F(Sigma)}";
}

/// <summary>Images from a source that re-encodes them as JPEG at a low quality (decoded back before saving).</summary>
public sealed record RecompressCue(int Quality) : Cue("recompression", "source", "recompressed", "original")
{
    public override string Describe() => $"jpeg-q{Quality}";
}
