using AuditSvc.Core.Models;

namespace AuditSvc.Core.Tests.Models;

/// <summary>
/// Check values: Araujo, Norris &amp; Sim (2019), "Computing Receptive Fields of Convolutional Neural
/// Networks", Distill, doi 10.23915/distill.00021, table of final-layer r, S, P (see /work/shared/REFERENCES.md).
/// Offsets are checked through P = (r − 1)/2 − offset under the padding convention stated per test.
/// </summary>
public class ReceptiveFieldsTests
{
    private sealed class Layout(string input = "image")
    {
        private readonly List<FieldNode> _nodes = [];
        private int _n;
        public string Last { get; private set; } = input;
        public IReadOnlyList<FieldNode> Nodes => _nodes;
        public string Input { get; } = input;

        public string Win(int k, int s = 1, int p = 0, string? from = null) => Add(FieldNode.Window(Name(), from ?? Last, k, s, p));
        public string Ew(params string[] from) => Add(FieldNode.Elementwise(Name(), from.Length == 0 ? [Last] : from));
        private string Name() => $"t{_n++}";
        private string Add(FieldNode node) { _nodes.Add(node); return Last = node.Output; }

        public ReceptiveField Field(string name, int size = 224) => ReceptiveFields.Walk(Input, _nodes, size, size)[name];
    }

    private static double EffectivePadding(RfAxis a) => (a.Size - 1) / 2 - a.Offset;

    [Fact]
    public void Walk_AlexNetV2Layout_MatchesPublishedTable()
    {
        // TF-slim alexnet_v2 feature layers: conv1 11/4 VALID, pool 3/2 VALID, conv2 5 SAME, pool 3/2,
        // conv3–5 3 SAME, pool5 3/2. Symmetric SAME padding here.
        var l = new Layout();
        l.Win(11, 4); l.Ew(); l.Win(3, 2); l.Win(5, 1, 2); l.Ew(); l.Win(3, 2);
        l.Win(3, 1, 1); l.Win(3, 1, 1); l.Win(3, 1, 1); var last = l.Win(3, 2);
        var f = l.Field(last);
        Assert.Equal(195, f.Y.Size); // Araujo et al. 2019: r = 195
        Assert.Equal(32, f.Y.Jump);  // S = 32
        Assert.Equal(64, EffectivePadding(f.Y)); // P = 64 (their layout pads symmetrically here)
        Assert.Equal(f.Y, f.X);
    }

    [Fact]
    public void Walk_Vgg16Pool5Layout_MatchesPublishedTable()
    {
        var l = new Layout();
        foreach (int convs in new[] { 2, 2, 3, 3, 3 })
        {
            for (int i = 0; i < convs; i++) { l.Win(3, 1, 1); l.Ew(); }
            l.Win(2, 2);
        }
        var f = l.Field(l.Last);
        Assert.Equal(212, f.X.Size); // Araujo et al. 2019: r = 212
        Assert.Equal(32, f.X.Jump);  // S = 32
        Assert.Equal(90, EffectivePadding(f.X)); // P = 90 with pad 1 on every 3×3 convolution
    }

    /// <summary>ResNet v1 bottleneck stages; stride on the 3×3 convolution; projection shortcut when needed.</summary>
    private static void Bottleneck(Layout l, int stride, bool project)
    {
        string input = l.Last;
        l.Win(1); l.Ew(); l.Win(3, stride, 1); l.Ew(); var main = l.Win(1);
        string shortcut = project ? l.Win(1, stride, 0, input) : input;
        l.Ew(main, shortcut); l.Ew();
    }

    [Fact]
    public void Walk_ResNet50V1Layout_MatchesPublishedRAndS()
    {
        // TF-slim resnet_v1_50: the stride sits on the last unit of blocks 1–3.
        var l = new Layout();
        l.Win(7, 2, 3); l.Ew(); l.Win(3, 2, 1);
        foreach (var (units, lastStride) in new[] { (3, 2), (4, 2), (6, 2), (3, 1) })
            for (int u = 0; u < units; u++) Bottleneck(l, u == units - 1 ? lastStride : 1, u == 0 || u == units - 1);
        var f = l.Field(l.Last);
        Assert.Equal(483, f.Y.Size); // Araujo et al. 2019: r = 483
        Assert.Equal(32, f.Y.Jump);  // S = 32
        // Their table says P = 239 with TensorFlow's asymmetric SAME max-pool; every layer padded
        // symmetrically (as here) gives 2 more (REFERENCES.md).
        Assert.Equal(241, EffectivePadding(f.Y));
    }

    [Fact]
    public void Walk_ResNet50V1Layout_SamePaddedPoolGivesPublishedP()
    {
        // The same network with the stem pool padded as ONNX SAME_UPPER pads it on a 112-pixel map.
        int pool = ReceptiveFields.SamePadBegin(112, 3, 2, 1, upper: true);
        Assert.Equal(0, pool);
        var l = new Layout();
        l.Win(7, 2, 3); l.Ew(); l.Win(3, 2, pool);
        foreach (var (units, lastStride) in new[] { (3, 2), (4, 2), (6, 2), (3, 1) })
            for (int u = 0; u < units; u++) Bottleneck(l, u == units - 1 ? lastStride : 1, u == 0 || u == units - 1);
        var f = l.Field(l.Last);
        Assert.Equal(239, EffectivePadding(f.Y)); // Araujo et al. 2019: P = 239
    }

    [Fact]
    public void Walk_ResNet18TorchvisionLayout_StagesSee7_11_43_99_211_435()
    {
        // torchvision resnet18: conv1 7/2 p3, maxpool 3/2 p1, basic blocks with the stride on the first
        // 3×3. Per-stage sizes recomputed; widely quoted (REFERENCES.md).
        var l = new Layout();
        var sizes = new List<double>();
        l.Win(7, 2, 3); sizes.Add(l.Field(l.Ew()).X.Size);
        sizes.Add(l.Field(l.Win(3, 2, 1)).X.Size);
        foreach (int stageStride in new[] { 1, 2, 2, 2 })
        {
            for (int b = 0; b < 2; b++)
            {
                int s = b == 0 ? stageStride : 1;
                string input = l.Last;
                l.Win(3, s, 1); l.Ew(); var main = l.Win(3, 1, 1);
                string shortcut = s != 1 ? l.Win(1, s, 0, input) : input;
                l.Ew(main, shortcut); l.Ew();
            }
            sizes.Add(l.Field(l.Last).X.Size);
        }
        Assert.Equal([7d, 11, 43, 99, 211, 435], sizes);
        Assert.Equal(32, l.Field(l.Last).X.Jump);
    }

    [Fact]
    public void Window_SingleLayer_OffsetIsHalfKernelMinusPadding()
    {
        var a = ReceptiveFields.Window(RfAxis.Input, 3, 2, 1);
        Assert.Equal(new RfAxis(3, 2, 0), a);
        var dilated = ReceptiveFields.Window(RfAxis.Input, 3, 1, 2, dilation: 2);
        Assert.Equal(new RfAxis(5, 1, 0), dilated);
    }

    [Fact]
    public void Merge_DifferentJumps_ReturnsNull()
    {
        Assert.Null(ReceptiveFields.Merge([new RfAxis(3, 1, 1), new RfAxis(3, 2, 1)]));
    }

    [Fact]
    public void Merge_NestedCentredPaths_TakesLargest()
    {
        var m = ReceptiveFields.Merge([new RfAxis(7, 2, 3), new RfAxis(3, 2, 3)]);
        Assert.Equal(new RfAxis(7, 2, 3), m);
    }

    [Fact]
    public void Walk_GlobalPoolThenDense_SeesWholeInput()
    {
        var nodes = new[]
        {
            FieldNode.Window("c", "x", 3, 1, 1), FieldNode.Whole("g", "c"), FieldNode.Whole("fc", "g", "W"),
        };
        var fields = ReceptiveFields.Walk("x", nodes, 32, 48);
        Assert.Equal(ReceptiveFields.Whole(32, 48), fields["fc"]);
        Assert.Equal(new RfAxis(48, 48, 23.5), fields["g"].X);
        Assert.False(fields.ContainsKey("W"));
    }

    [Theory]
    [InlineData(224, 3, 2, true, 0)]   // total 1: SAME_UPPER puts it at the end (ONNX operator spec)
    [InlineData(224, 3, 2, false, 1)]  // SAME_LOWER at the beginning
    [InlineData(224, 7, 2, true, 2)]   // total 5
    [InlineData(225, 3, 1, true, 1)]   // total 2
    public void SamePadBegin_OnnxRule_SplitsTotalPadding(int n, int k, int s, bool upper, int expected) =>
        Assert.Equal(expected, ReceptiveFields.SamePadBegin(n, k, s, 1, upper));
}
