using AuditSvc.Core.Activations;
using AuditSvc.Core.Analysis;
using AuditSvc.Core.Models;

namespace AuditSvc.Core.Tests.Analysis;

public class RegionsTests
{
    // An 8×8 grid over a 64×64 input, jump 8, size 7, offset 3.5 (a typical stride-8 layer).
    private static readonly LayerInfo Layer = new("l", "Relu", 4, 8, 8, 4, new ReceptiveField(new RfAxis(7, 8, 3.5), new RfAxis(7, 8, 3.5)), true);

    private static Peak[] At(params (int Y, int X)[] places) => places.Select((p, i) => new Peak(i, 1, (short)p.Y, (short)p.X)).ToArray();

    [Fact]
    public void Name_PeaksInTheCorner_IsThatCell() =>
        Assert.Equal("bottom-right", Regions.Name(Layer, At((7, 7), (7, 6), (6, 7), (7, 7), (0, 0)), 64, 64));

    [Fact]
    public void Name_PeaksAlongTheEdges_IsBorder() =>
        Assert.Equal(Regions.Border, Regions.Name(Layer, At((0, 3), (7, 4), (3, 0), (4, 7), (0, 4), (7, 3)), 64, 64));

    [Fact]
    public void Name_PeaksEverywhere_IsSpread() =>
        Assert.Equal(Regions.Spread, Regions.Name(Layer, At((3, 3), (4, 4), (1, 5), (5, 1), (0, 0), (7, 7), (2, 6), (6, 2)), 64, 64));

    [Fact]
    public void PeakBox_IsCentredOnOffsetPlusJumpTimesIndex()
    {
        var box = Regions.PeakBox(Layer, new Peak(0, 1, 2, 5), 64, 64);
        Assert.Equal(3.5 + 8 * 2, box.CenterY, 0);
        Assert.Equal(3.5 + 8 * 5, box.CenterX, 0);
        Assert.Equal(8, box.Width);
    }

    [Fact]
    public void ModalPlace_CountsNeighbours() =>
        Assert.Equal((7, 7, 0.8), PlaceCues.ModalPlace(At((7, 7), (7, 6), (6, 7), (7, 7), (0, 0))));
}
