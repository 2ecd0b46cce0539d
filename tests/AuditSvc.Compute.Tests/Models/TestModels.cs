namespace AuditSvc.Compute.Tests.Models;

/// <summary>Graphs shared by the intake tests; widths are small because fields do not depend on them.</summary>
internal static class TestModels
{
    /// <summary>Conv+Relu+MaxPool, a residual Add, GlobalAveragePool, Flatten, Gemm; input [batch,3,32,32].</summary>
    public static OnnxGraphBuilder SmallCnn(long? batch = 1, bool softmax = false, bool fixedReshape = false)
    {
        var g = new OnnxGraphBuilder(seed: 42);
        var x = g.Input("image", batch, 3, 32, 32);
        var c1 = g.Relu(g.Conv(x, 3, 4, 3, 1, 1));          // 4×32×32: too narrow to be a default
        var c2 = g.Relu(g.Conv(c1, 4, 8, 3, 1, 1));         // 8×32×32
        var p1 = g.MaxPool(c2, 2, 2);                        // 8×16×16
        var c3 = g.Relu(g.Conv(p1, 8, 8, 3, 1, 1));
        var c4 = g.Conv(c3, 8, 8, 3, 1, 1);
        var r = g.Relu(g.Add(c4, p1));                       // residual
        var c5 = g.Relu(g.Conv(r, 8, 16, 3, 2, 1));          // 16×8×8
        var gap = g.GlobalAveragePool(c5);
        var flat = fixedReshape ? g.Node("Reshape", [gap, g.Ints64("shape", 1, 16)]) : g.Flatten(gap);
        var logits = g.Gemm(flat, 16, 5);
        var output = softmax ? g.Softmax(logits) : logits;
        g.Output(output, batch, 5);
        return g;
    }

    /// <summary>VGG-16 feature layout to pool5 (3×3 convolutions padded 1, 2×2 pools), input 224.</summary>
    public static OnnxGraphBuilder Vgg16(out string pool5)
    {
        var g = new OnnxGraphBuilder();
        string x = g.Input("image", 1, 3, 224, 224);
        int cin = 3;
        foreach (int convs in new[] { 2, 2, 3, 3, 3 })
        {
            for (int i = 0; i < convs; i++) { x = g.Relu(g.Conv(x, cin, 8, 3, 1, 1)); cin = 8; }
            x = g.MaxPool(x, 2, 2);
        }
        pool5 = x;
        Head(g, x, 8);
        return g;
    }

    /// <summary>TF-slim resnet_v1_50 layout with ONNX auto_pad where TensorFlow pads SAME, input 224.</summary>
    public static OnnxGraphBuilder ResNet50V1(out string last)
    {
        var g = new OnnxGraphBuilder();
        string x = g.Input("image", 1, 3, 224, 224);
        x = g.Relu(g.Conv(x, 3, 4, 7, 2, 3));
        x = g.MaxPool(x, 3, 2, autoPad: "SAME_UPPER");
        foreach (var (units, lastStride) in new[] { (3, 2), (4, 2), (6, 2), (3, 1) })
        {
            for (int u = 0; u < units; u++)
            {
                int s = u == units - 1 ? lastStride : 1;
                string input = x;
                var main = g.Relu(g.Conv(input, 4, 2, 1));
                main = g.Relu(g.Conv(main, 2, 2, 3, s, 1));
                main = g.Conv(main, 2, 4, 1);
                string shortcut = s != 1 ? g.Conv(input, 4, 4, 1, s) : input;
                x = g.Relu(g.Add(main, shortcut));
            }
        }
        last = x;
        Head(g, x, 4);
        return g;
    }

    /// <summary>TF-slim alexnet_v2 feature layout: conv1 VALID, the other convolutions SAME_UPPER.</summary>
    public static OnnxGraphBuilder AlexNetV2(out string pool5)
    {
        var g = new OnnxGraphBuilder();
        string x = g.Input("image", 1, 3, 224, 224);
        x = g.Relu(g.Conv(x, 3, 4, 11, 4, autoPad: "VALID"));
        x = g.MaxPool(x, 3, 2);
        x = g.Relu(g.Conv(x, 4, 4, 5, autoPad: "SAME_UPPER"));
        x = g.MaxPool(x, 3, 2);
        for (int i = 0; i < 3; i++) x = g.Relu(g.Conv(x, 4, 4, 3, autoPad: "SAME_UPPER"));
        pool5 = x = g.MaxPool(x, 3, 2);
        Head(g, x, 4);
        return g;
    }

    private static void Head(OnnxGraphBuilder g, string x, int channels)
    {
        var logits = g.Gemm(g.Flatten(g.GlobalAveragePool(x)), channels, 3);
        g.Output(logits, 1, 3);
    }
}
