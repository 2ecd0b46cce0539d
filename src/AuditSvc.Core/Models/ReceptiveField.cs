namespace AuditSvc.Core.Models;

/// <summary>
/// Receptive field along one axis, in input pixels: <see cref="Size"/> is how many input pixels one
/// position sees, <see cref="Jump"/> the input distance between neighbouring positions (effective
/// stride), <see cref="Offset"/> the input coordinate of the centre of position 0 (may be negative).
/// The centre of position i is Offset + Jump·i (Araujo, Norris &amp; Sim 2019).
/// </summary>
public readonly record struct RfAxis(double Size, double Jump, double Offset)
{
    public static readonly RfAxis Input = new(1, 1, 0);

    public double Center(int index) => Offset + Jump * index;
}

/// <summary>
/// Receptive field of a layer's positions along both image axes. <see cref="Global"/> marks a position that also
/// takes in the whole image through a side path (squeeze-excitation gates, attention, pooled context merged back):
/// its box is still where the position sits (the local path that carries it), but its true field is the whole image.
/// </summary>
public sealed record ReceptiveField(RfAxis Y, RfAxis X)
{
    public static readonly ReceptiveField Input = new(RfAxis.Input, RfAxis.Input);

    /// <summary>True when some path into this position has seen the whole image.</summary>
    public bool Global { get; init; }

    /// <summary>
    /// The input box seen by position (y, x), always inside an image of the given size: the centre is clamped into
    /// the image, and an axis whose field covers the input (or whose step is as large) gives the whole axis.
    /// </summary>
    public Box BoxAt(int y, int x, int inputHeight, int inputWidth)
    {
        var (top, height) = Span1(Y, y, inputHeight);
        var (left, width) = Span1(X, x, inputWidth);
        return new Box(left, top, width, height);
    }

    private static (int Start, int Length) Span1(RfAxis axis, int index, int extent)
    {
        if (extent < 1) return (0, 1);
        if (axis.Size >= extent || axis.Jump >= extent) return (0, extent);
        double c = Math.Clamp(axis.Center(index), 0, extent - 1);
        double h = (axis.Size - 1) / 2.0;
        int start = (int)Math.Clamp(Math.Floor(c - h), 0, extent - 1);
        int end = (int)Math.Clamp(Math.Ceiling(c + h), start, extent - 1);
        return (start, end - start + 1);
    }
}

/// <summary>An axis-aligned pixel box: left, top, width, height.</summary>
public readonly record struct Box(int X, int Y, int Width, int Height)
{
    public double CenterX => X + (Width - 1) / 2.0;
    public double CenterY => Y + (Height - 1) / 2.0;
}
