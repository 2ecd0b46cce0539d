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

/// <summary>Receptive field of a layer's positions along both image axes.</summary>
public sealed record ReceptiveField(RfAxis Y, RfAxis X)
{
    public static readonly ReceptiveField Input = new(RfAxis.Input, RfAxis.Input);

    /// <summary>The input box seen by position (y, x), clipped to an image of the given size.</summary>
    public Box BoxAt(int y, int x, int inputHeight, int inputWidth)
    {
        double cy = Y.Center(y), cx = X.Center(x);
        double hy = (Y.Size - 1) / 2.0, hx = (X.Size - 1) / 2.0;
        int top = (int)Math.Max(0, Math.Floor(cy - hy));
        int left = (int)Math.Max(0, Math.Floor(cx - hx));
        int bottom = (int)Math.Min(inputHeight - 1, Math.Ceiling(cy + hy));
        int right = (int)Math.Min(inputWidth - 1, Math.Ceiling(cx + hx));
        if (bottom < top) bottom = top;
        if (right < left) right = left;
        return new Box(left, top, right - left + 1, bottom - top + 1);
    }
}

/// <summary>An axis-aligned pixel box: left, top, width, height.</summary>
public readonly record struct Box(int X, int Y, int Width, int Height)
{
    public double CenterX => X + (Width - 1) / 2.0;
    public double CenterY => Y + (Height - 1) / 2.0;
}
