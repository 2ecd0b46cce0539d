using AuditSvc.Core;
using AuditSvc.Core.Models;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>Finds the readable layers of a graph, their receptive fields, and the default choice.</summary>
public static class LayerCatalog
{
    private static readonly HashSet<string> Activations = new(StringComparer.Ordinal)
    {
        "Relu", "LeakyRelu", "PRelu", "Sigmoid", "Tanh", "Clip", "HardSigmoid", "HardSwish", "Elu", "Selu",
        "Celu", "Gelu", "Mish", "Softplus", "ThresholdedRelu",
    };

    // Copies of another tensor or non-feature outputs: never worth reading on their own.
    private static readonly HashSet<string> NotLayers = new(StringComparer.Ordinal)
        { "Identity", "Dropout", "Cast", "Constant", "ConstantOfShape", "Shape", "Softmax", "LogSoftmax", "Transpose" };

    // What may sit between the penultimate features and the class output.
    private static readonly HashSet<string> ClassifierTail = new(StringComparer.Ordinal)
        { "Softmax", "LogSoftmax", "Sigmoid", "Identity", "Dropout", "Flatten", "Reshape", "Squeeze", "Add", "Cast" };

    private static readonly HashSet<string> Classifiers = new(StringComparer.Ordinal) { "Gemm", "MatMul", "Conv" };

    /// <summary>
    /// Every float tensor a node produces from the image that can be read as a layer, in topological order, with its
    /// receptive field: channels-first maps [1,C,H,W], channels-last maps [1,H,W,C], patch tokens [1,T,C] and
    /// vectors [1,C] (see <see cref="TensorLayouts"/>). Graph outputs are not layers. Tensors of rank 3 or more whose
    /// places cannot be traced go to <paramref name="skipped"/> with the reason.
    /// </summary>
    public static List<LayerInfo> Candidates(GraphProto graph, string imageInput,
        IReadOnlyDictionary<string, long[]> shapes, int inputHeight, int inputWidth, List<SkippedTensor>? skipped = null, int inputChannels = 3)
    {
        ArgumentNullException.ThrowIfNull(graph);
        ArgumentNullException.ThrowIfNull(shapes);
        long[] inputShape = [1, inputChannels, inputHeight, inputWidth];
        var layouts = TensorLayouts.Infer(graph, imageInput, shapes, inputShape);
        var fields = ReceptiveFields.Walk(imageInput, OnnxFieldNodes.From(graph, imageInput, shapes, layouts), inputHeight, inputWidth);
        var outputs = graph.Output.Select(o => o.Name).ToHashSet(StringComparer.Ordinal);
        var producers = new Dictionary<string, NodeProto>(StringComparer.Ordinal);
        foreach (var n in graph.Node) foreach (var o in n.Output) producers[o] = n;
        var layers = new List<LayerInfo>();
        foreach (var node in graph.Node)
        {
            if (NotLayers.Contains(node.OpType)) continue;
            // Residual additions and multi-branch concatenations end a block: both merge image paths.
            bool merges = node.OpType is "Add" or "Sum" or "Concat" && node.Input.Count(fields.ContainsKey) >= 2;
            bool activation = Activations.Contains(node.OpType) || IsComposedActivation(node, producers);
            foreach (var name in node.Output)
            {
                if (outputs.Contains(name) || !shapes.TryGetValue(name, out var s) || !fields.TryGetValue(name, out var field)) continue;
                if (s.Length < 2 || (s.Length == 2 && s[0] != 1)) continue;
                layouts.TryGetValue(name, out var layout);
                var whole = ReceptiveFields.Whole(inputHeight, inputWidth);
                LayerInfo? layer = s[0] != 1 ? null : (s.Length, layout?.Kind) switch
                {
                    (2, _) => new LayerInfo(name, node.OpType, Dim(s[1]), 1, 1, 2, whole, false),
                    (4, LayerLayout.ChannelsFirst) => new LayerInfo(name, node.OpType, Dim(s[1]), Dim(s[2]), Dim(s[3]), 4, field, false),
                    (4, LayerLayout.ChannelsLast) => new LayerInfo(name, node.OpType, Dim(s[3]), Dim(s[1]), Dim(s[2]), 4, field, false)
                        { Layout = LayerLayout.ChannelsLast },
                    (3, LayerLayout.Tokens) => new LayerInfo(name, node.OpType, Dim(s[2]), layout!.GridH, layout.GridW, 4, field, false)
                        { Layout = LayerLayout.Tokens, PrefixTokens = layout.Prefix },
                    _ => null,
                };
                if (layer is not null) layers.Add(layer with { MergesPaths = merges, IsActivation = activation });
                else skipped?.Add(new SkippedTensor(name, node.Name, node.OpType, s, layout?.Kind == LayerLayout.Vector
                    ? "a flattened copy of a channels-first map on its way to tokens (the map and the tokens are read instead)"
                    : "not a traced image layout: attention scores, heads split off, or a reshape the intake cannot follow"));
            }
        }
        return layers;
    }

    private static int Dim(long d) => checked((int)d);

    // SiLU/Swish exported as Mul(x, Sigmoid(x)) (Hardswish as Mul(x, HardSigmoid(x))), and GELU exported as
    // Mul(Mul(x, Add(Erf(x / √2), 1)), 0.5): the Mul is the activation's output.
    private static bool IsComposedActivation(NodeProto node, Dictionary<string, NodeProto> producers)
    {
        if (node.OpType != "Mul" || node.Input.Count != 2) return false;
        foreach (var (a, b) in new[] { (node.Input[0], node.Input[1]), (node.Input[1], node.Input[0]) })
        {
            if (producers.TryGetValue(b, out var gate) && gate.OpType is "Sigmoid" or "HardSigmoid" && gate.Input.Count > 0 && gate.Input[0] == a) return true;
            if (producers.TryGetValue(a, out var inner) && inner.OpType == "Mul"
                && inner.Input.Any(i => producers.TryGetValue(i, out var add) && add.OpType == "Add"
                    && add.Input.Any(j => producers.TryGetValue(j, out var erf) && erf.OpType == "Erf"))) return true;
        }
        return false;
    }

    /// <summary>Token layers read by default at most: the residual stream after evenly spaced blocks, the last always.</summary>
    public const int MaxTokenDefaults = 8;

    /// <summary>
    /// The defaults a practitioner would read: the last activation or block output (else the last tensor) at each spatial
    /// resolution, skipping leading resolutions with fewer than 8 channels, plus the penultimate features
    /// feeding the classifier. Token grids (a transformer keeps one grid through every block) read the residual
    /// stream after each block (at most <see cref="MaxTokenDefaults"/>, evenly spaced, the last always).
    /// Returns the candidates with <see cref="LayerInfo.IsDefault"/> set.
    /// </summary>
    public static List<LayerInfo> MarkDefaults(GraphProto graph, IReadOnlyList<LayerInfo> candidates, string classOutput)
    {
        var chosen = new HashSet<string>(StringComparer.Ordinal);
        var groups = candidates.Where(l => l.Rank == 4 && l.Height * l.Width > 1)
            .GroupBy(l => (Tokens: l.Layout == LayerLayout.Tokens, l.Height, l.Width)).ToList();
        var spatial = groups.Where(g => !g.Key.Tokens)
            .Select(g => g.LastOrDefault(l => l.IsActivation || l.MergesPaths) ?? g.Last())
            .ToList();
        // Early, narrow maps are close to raw colour; drop them while something wider remains.
        while (spatial.Count > 1 && spatial[0].Channels < 8) spatial.RemoveAt(0);
        foreach (var l in spatial) chosen.Add(l.Name);
        foreach (var g in groups.Where(g => g.Key.Tokens))
        {
            var stream = g.Where(l => l.MergesPaths).ToList();
            if (stream.Count == 0) { chosen.Add((g.LastOrDefault(l => l.IsActivation) ?? g.Last()).Name); continue; }
            int take = Math.Min(MaxTokenDefaults, stream.Count);
            for (int i = 1; i <= take; i++) chosen.Add(stream[(int)Math.Round((double)i * stream.Count / take) - 1].Name);
        }
        var penultimate = Penultimate(graph, candidates, classOutput)
            ?? candidates.LastOrDefault(l => l.Rank == 2 || l.Height * l.Width == 1);
        if (penultimate is not null) chosen.Add(penultimate.Name);
        return candidates.Select(l => l with { IsDefault = chosen.Contains(l.Name) }).ToList();
    }

    /// <summary>Resolves an explicit list of names against the candidates, in the order given.</summary>
    /// <param name="skipped">Tensors found but not readable: naming one says which node makes it and why.</param>
    public static List<LayerInfo> Select(string modelPath, IReadOnlyList<LayerInfo> candidates, IReadOnlyList<string> names,
        IReadOnlyList<SkippedTensor>? skipped = null)
    {
        ArgumentNullException.ThrowIfNull(names);
        var byName = candidates.ToDictionary(l => l.Name, StringComparer.Ordinal);
        var picked = new List<LayerInfo>();
        foreach (var name in names.Select(n => n.Trim()).Where(n => n.Length > 0).Distinct(StringComparer.Ordinal))
        {
            if (skipped?.FirstOrDefault(s => s.Name == name) is { } why)
                throw new AuditInputException("--layers",
                    $"'{name}' [{string.Join(",", why.Shape)}] from node '{why.Node}' ({why.OpType}) cannot be read: {why.Reason}");
            if (!byName.TryGetValue(name, out var layer))
                throw new AuditInputException("--layers",
                    $"'{name}' is not a readable layer of {modelPath}; layers: {string.Join(", ", candidates.Select(l => l.Name))}");
            picked.Add(layer);
        }
        if (picked.Count == 0) throw new AuditInputException("--layers", "no layer names given");
        return picked;
    }

    // Walk back from the class output through the classifier's tail to the dense layer; its data input
    // (or the nearest candidate above it) is the penultimate feature vector.
    private static LayerInfo? Penultimate(GraphProto graph, IReadOnlyList<LayerInfo> candidates, string classOutput)
    {
        var producer = new Dictionary<string, NodeProto>(StringComparer.Ordinal);
        foreach (var n in graph.Node) foreach (var o in n.Output) producer[o] = n;
        var initializers = graph.Initializer.Select(t => t.Name).ToHashSet(StringComparer.Ordinal);
        var byName = candidates.ToDictionary(l => l.Name, StringComparer.Ordinal);
        string current = classOutput;
        bool passedClassifier = false;
        for (int step = 0; step < 64 && producer.TryGetValue(current, out var node); step++)
        {
            if (passedClassifier && byName.TryGetValue(current, out var found)) return found;
            bool isClassifier = !passedClassifier && Classifiers.Contains(node.OpType);
            if (!passedClassifier && !isClassifier && !ClassifierTail.Contains(node.OpType)) return null;
            passedClassifier |= isClassifier;
            var data = node.Input.FirstOrDefault(i => !initializers.Contains(i) && producer.ContainsKey(i));
            if (data is null) return null;
            current = data;
        }
        return passedClassifier && byName.TryGetValue(current, out var last) ? last : null;
    }
}
