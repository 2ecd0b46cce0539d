using AuditSvc.Core.Activations;
using AuditSvc.Core.Models;

namespace AuditSvc.Core.Analysis;

/// <summary>Where a unit's peaks fall on the input: a 3×3 grid, the outer band, or spread out.</summary>
public static class Regions
{
    public static readonly string[] CellNames =
        ["top-left", "top", "top-right", "left", "center", "right", "bottom-left", "bottom", "bottom-right"];

    public const string Border = "border";
    public const string Spread = "spread";
    public const string WholeImage = "whole-image";

    /// <summary>Share of peaks one grid cell must hold to name the region (DESIGN: 60%).</summary>
    public const double CellShare = 0.6;

    /// <summary>Width of the outer band as a share of each side (common practice for frame-like cues: an eighth).</summary>
    public const double BandShare = 0.125;

    /// <summary>The input box a peak of this layer sees.</summary>
    public static Box PeakBox(LayerInfo layer, in Peak peak, int inputHeight, int inputWidth) =>
        layer.Rank == 2 ? new Box(0, 0, inputWidth, inputHeight) : layer.Field.BoxAt(peak.Y, peak.X, inputHeight, inputWidth);

    /// <summary>Counts of peak centres per grid cell, row-major (top-left first).</summary>
    public static int[] Grid(LayerInfo layer, ReadOnlySpan<Peak> peaks, int inputHeight, int inputWidth)
    {
        var grid = new int[9];
        foreach (var p in peaks)
        {
            var (cy, cx) = Center(layer, p, inputHeight, inputWidth);
            int row = Math.Clamp((int)(cy * 3 / inputHeight), 0, 2), col = Math.Clamp((int)(cx * 3 / inputWidth), 0, 2);
            grid[row * 3 + col]++;
        }
        return grid;
    }

    /// <summary>The region name of a set of peaks (see DESIGN.md, Statistics).</summary>
    public static string Name(LayerInfo layer, ReadOnlySpan<Peak> peaks, int inputHeight, int inputWidth)
    {
        if (layer.Rank == 2 || (layer.Height == 1 && layer.Width == 1)) return WholeImage;
        if (peaks.Length == 0) return Spread;
        var grid = Grid(layer, peaks, inputHeight, inputWidth);
        int best = 0;
        for (int i = 1; i < 9; i++) if (grid[i] > grid[best]) best = i;
        if (grid[best] >= CellShare * peaks.Length) return CellNames[best];
        int band = 0;
        foreach (var p in peaks)
        {
            var (cy, cx) = Center(layer, p, inputHeight, inputWidth);
            double by = BandShare * inputHeight, bx = BandShare * inputWidth;
            if (cy < by || cx < bx || cy >= inputHeight - by || cx >= inputWidth - bx) band++;
        }
        return band > 0.5 * peaks.Length ? Border : Spread;
    }

    private static (double Y, double X) Center(LayerInfo layer, in Peak p, int h, int w) =>
        (Math.Clamp(layer.Field.Y.Center(p.Y), 0, h - 1), Math.Clamp(layer.Field.X.Center(p.X), 0, w - 1));
}
