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
        { "Identity", "Dropout", "Cast", "Constant", "ConstantOfShape", "Shape", "Softmax", "LogSoftmax" };

    // What may sit between the penultimate features and the class output.
    private static readonly HashSet<string> ClassifierTail = new(StringComparer.Ordinal)
        { "Softmax", "LogSoftmax", "Sigmoid", "Identity", "Dropout", "Flatten", "Reshape", "Squeeze", "Add", "Cast" };

    private static readonly HashSet<string> Classifiers = new(StringComparer.Ordinal) { "Gemm", "MatMul", "Conv" };

    /// <summary>
    /// Every float tensor of rank 4 [1,C,H,W] or rank 2 [1,C] that a node produces from the image, in
    /// topological order, with its receptive field. Graph outputs are not layers.
    /// </summary>
    public static List<LayerInfo> Candidates(GraphProto graph, string imageInput,
        IReadOnlyDictionary<string, long[]> shapes, int inputHeight, int inputWidth)
    {
        var fields = ReceptiveFields.Walk(imageInput, OnnxFieldNodes.From(graph, imageInput, shapes), inputHeight, inputWidth);
        var outputs = graph.Output.Select(o => o.Name).ToHashSet(StringComparer.Ordinal);
        var layers = new List<LayerInfo>();
        foreach (var node in graph.Node)
        {
            if (NotLayers.Contains(node.OpType)) continue;
            foreach (var name in node.Output)
            {
                if (outputs.Contains(name) || !shapes.TryGetValue(name, out var s) || !fields.TryGetValue(name, out var field)) continue;
                if (s.Length == 4 && s[0] == 1)
                    layers.Add(new LayerInfo(name, node.OpType, (int)s[1], (int)s[2], (int)s[3], 4, field, false));
                else if (s.Length == 2 && s[0] == 1)
                    layers.Add(new LayerInfo(name, node.OpType, (int)s[1], 1, 1, 2, ReceptiveFields.Whole(inputHeight, inputWidth), false));
            }
        }
        return layers;
    }

    /// <summary>
    /// The defaults a practitioner would read: the last activation (else the last tensor) at each spatial
    /// resolution, skipping leading resolutions with fewer than 8 channels, plus the penultimate features
    /// feeding the classifier. Returns the candidates with <see cref="LayerInfo.IsDefault"/> set.
    /// </summary>
    public static List<LayerInfo> MarkDefaults(GraphProto graph, IReadOnlyList<LayerInfo> candidates, string classOutput)
    {
        var chosen = new HashSet<string>(StringComparer.Ordinal);
        var spatial = candidates.Where(l => l.Rank == 4 && l.Height * l.Width > 1)
            .GroupBy(l => (l.Height, l.Width))
            .Select(g => g.LastOrDefault(l => Activations.Contains(l.OpType)) ?? g.Last())
            .ToList();
        // Early, narrow maps are close to raw colour; drop them while something wider remains.
        while (spatial.Count > 1 && spatial[0].Channels < 8) spatial.RemoveAt(0);
        foreach (var l in spatial) chosen.Add(l.Name);
        var penultimate = Penultimate(graph, candidates, classOutput)
            ?? candidates.LastOrDefault(l => l.Rank == 2 || l.Height * l.Width == 1);
        if (penultimate is not null) chosen.Add(penultimate.Name);
        return candidates.Select(l => l with { IsDefault = chosen.Contains(l.Name) }).ToList();
    }

    /// <summary>Resolves an explicit list of names against the candidates, in the order given.</summary>
    public static List<LayerInfo> Select(string modelPath, IReadOnlyList<LayerInfo> candidates, IReadOnlyList<string> names)
    {
        var byName = candidates.ToDictionary(l => l.Name, StringComparer.Ordinal);
        var picked = new List<LayerInfo>();
        foreach (var name in names.Select(n => n.Trim()).Where(n => n.Length > 0).Distinct(StringComparer.Ordinal))
        {
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
