using AuditSvc.Core.Analysis;

namespace AuditSvc.Core.Tests.Analysis;

/// <summary>Invented pixel data: noise images with a planted corner patch, colour shift or object.</summary>
public class CueRegionsTests
{
    private const int H = 48, W = 64;

    private static byte[] Image(Random rng, bool stamp, bool warm, bool blob)
    {
        var px = new byte[H * W * 3];
        int shift = rng.Next(-20, 21);
        for (int i = 0; i < px.Length; i++) px[i] = (byte)Math.Clamp(110 + shift + rng.Next(-30, 31), 0, 255);
        if (warm)
            for (int p = 0; p < H * W; p++) { px[3 * p] = (byte)Math.Min(255, px[3 * p] + 45); px[3 * p + 2] = (byte)Math.Max(0, px[3 * p + 2] - 45); }
        if (blob)
            for (int y = 18; y < 30; y++) for (int x = 26; x < 38; x++) for (int c = 0; c < 3; c++) px[(y * W + x) * 3 + c] = 230;
        if (stamp)
            for (int y = 40; y < 46; y++) for (int x = 50; x < 62; x++) { px[(y * W + x) * 3] = 20; px[(y * W + x) * 3 + 1] = (byte)(200 * ((x + y) % 2)); px[(y * W + x) * 3 + 2] = 20; }
        return px;
    }

    [Fact]
    public void Find_CornerStampLinkedToALabelWhoseObjectDiffers_IsLocalAroundTheStampOnly()
    {
        var rng = new Random(1);
        var g = new PixelGroups(H, W);
        for (int i = 0; i < 600; i++)
        {
            int label = i % 2;
            // Label 1 has a bright central object; the stamp is 80% with label 1, 20% with label 0.
            bool stamp = rng.NextDouble() < (label == 1 ? 0.8 : 0.2);
            g.Add(label, stamp, Image(rng, stamp, false, blob: label == 1));
        }
        var r = CueRegions.Find(g);
        Assert.Equal(CueRegions.Local, r.Kind);
        var box = r.Box!.Value;
        // The planted patch is x 50..61, y 40..45; the region holds it with a small margin and nothing of the object.
        Assert.InRange(box.X, 47, 50);
        Assert.InRange(box.Y, 37, 40);
        Assert.InRange(box.X + box.Width, 62, 64);
        Assert.InRange(box.Y + box.Height, 46, 48);
        Assert.False(r.Mask[24 * W + 32], "the object's centre must not be in the stamp's region");
        Assert.True(r.Share < 0.1);
    }

    [Fact]
    public void Find_ColourCastOnEveryPixel_IsGlobal()
    {
        var rng = new Random(2);
        var g = new PixelGroups(H, W);
        for (int i = 0; i < 300; i++)
        {
            bool warm = i % 3 == 0;
            g.Add(i % 2, warm, Image(rng, false, warm, false));
        }
        var r = CueRegions.Find(g);
        Assert.Equal(CueRegions.Global, r.Kind);
        Assert.True(r.Share > 0.9);
    }

    [Fact]
    public void Find_ValueThatChangesNoPixel_HasNoRegion()
    {
        var rng = new Random(3);
        var g = new PixelGroups(H, W);
        for (int i = 0; i < 400; i++) g.Add(i % 2, rng.NextDouble() < 0.5, Image(rng, false, false, blob: i % 2 == 1));
        var r = CueRegions.Find(g);
        Assert.Equal(CueRegions.None, r.Kind);
        Assert.Null(r.Box);
        Assert.True(r.Peak < r.Threshold);
    }

    [Fact]
    public void Find_TooFewImagesPerSide_HasNoRegion()
    {
        var rng = new Random(4);
        var g = new PixelGroups(H, W);
        for (int i = 0; i < 20; i++) g.Add(0, i < 3, Image(rng, i < 3, false, false));
        Assert.Equal(CueRegions.None, CueRegions.Find(g).Kind);
    }

    [Fact]
    public void Find_Map_IsPooledToAtMost32CellsASideAndPeaksAtTheStamp()
    {
        var rng = new Random(5);
        var g = new PixelGroups(H, W);
        for (int i = 0; i < 300; i++) { bool s = i % 2 == 0; g.Add(0, s, Image(rng, s, false, false)); }
        var r = CueRegions.Find(g);
        Assert.Equal((32, 24), (r.MapWidth, r.MapHeight));
        int peakCell = Array.IndexOf(r.Map, r.Map.Max());
        Assert.InRange(peakCell % 32, 25, 31);
        Assert.InRange(peakCell / 32, 20, 23);
    }
}
