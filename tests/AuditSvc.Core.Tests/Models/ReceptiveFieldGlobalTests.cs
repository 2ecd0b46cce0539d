using AuditSvc.Core.Models;

namespace AuditSvc.Core.Tests.Models;

/// <summary>
/// Squeeze-excitation gates and attention feed every position a path that has seen the whole image. Before these
/// tests, such a path made the whole map "see the whole image" while it kept its H×W grid, so a peak at row 3 of a
/// 4×4 map was boxed at input row 3·64 of a 64-pixel image and the exemplar crop threw
/// ArgumentOutOfRangeException (Parameter 'y').
/// </summary>
public class ReceptiveFieldGlobalTests
{
    [Fact]
    public void BoxAt_PositionBeyondWholeField_StaysInsideImage()
    {
        var whole = ReceptiveFields.Whole(64, 64);
        Assert.Equal(new Box(0, 0, 64, 64), whole.BoxAt(3, 2, 64, 64));
    }

    [Theory]
    [InlineData(0)]
    [InlineData(3)]
    [InlineData(40)]
    public void BoxAt_AnyPosition_IsInsideTheImage(int index)
    {
        // 16-pixel step, 95-pixel field (ResNet-style last stage on a 64×64 input): common practice clips the box.
        var f = new ReceptiveField(new RfAxis(95, 16, 0), new RfAxis(95, 16, 0));
        var box = f.BoxAt(index, index, 64, 64);
        Assert.InRange(box.X, 0, 63);
        Assert.InRange(box.Y, 0, 63);
        Assert.InRange(box.X + box.Width, 1, 64);
        Assert.InRange(box.Y + box.Height, 1, 64);
    }

    [Fact]
    public void Walk_SqueezeExcitationGate_KeepsLocalPlaceAndMarksGlobal()
    {
        // conv 3×3 stride 2 → global pool → 1×1 convs (the gate) → gate × features → conv 1×1.
        FieldNode[] nodes =
        [
            FieldNode.Window("c", "x", 3, 2, 1),
            FieldNode.Whole("pool", "c"),
            FieldNode.Window("fc", "pool", 1),
            FieldNode.Elementwise("gated", "c", "fc"),
            FieldNode.Window("out", "gated", 1),
        ];
        var fields = ReceptiveFields.Walk("x", nodes, 64, 64);
        var local = fields["c"];
        Assert.False(local.Global);
        Assert.Equal(local.Y, fields["gated"].Y);
        Assert.Equal(local.X, fields["out"].X);
        Assert.True(fields["gated"].Global);
        Assert.True(fields["out"].Global);
        Assert.Equal(ReceptiveFields.Whole(64, 64), fields["fc"]);
    }

    [Fact]
    public void Walk_WindowOnWholeOnly_StaysWhole()
    {
        FieldNode[] nodes = [FieldNode.Whole("g", "x"), FieldNode.Window("c", "g", 3)];
        Assert.Equal(ReceptiveFields.Whole(32, 32), ReceptiveFields.Walk("x", nodes, 32, 32)["c"]);
    }
}
