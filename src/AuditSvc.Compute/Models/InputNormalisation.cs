using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>
/// Finds normalisation done inside the graph: right after the image input, a chain of Sub/Div/Mul/Add by per-channel
/// constants (mean and std folded into the model at export). The recipe must then not normalise a second time.
/// </summary>
public static class InputNormalisation
{
    private static readonly HashSet<string> Arithmetic = new(StringComparer.Ordinal) { "Sub", "Div", "Mul", "Add" };

    /// <summary>The nodes that normalise the input, as "Op 'name'", or empty when the graph takes normalised input.</summary>
    public static IReadOnlyList<string> Detect(GraphProto graph, string imageInput)
    {
        ArgumentNullException.ThrowIfNull(graph);
        var constants = graph.Initializer.ToDictionary(t => t.Name, t => t.Dims.Aggregate(1L, (a, b) => a * b), StringComparer.Ordinal);
        foreach (var n in graph.Node.Where(n => n.OpType == "Constant"))
            if (n.Attribute.FirstOrDefault(a => a.Name == "value")?.T is { } t)
                constants[n.Output[0]] = t.Dims.Aggregate(1L, (a, b) => a * b);
        var found = new List<string>();
        string current = imageInput;
        for (int step = 0; step < 8; step++)
        {
            var consumers = graph.Node.Where(n => n.Input.Contains(current)).ToList();
            if (consumers.Count != 1) break;
            var node = consumers[0];
            if (node.OpType == "Transpose") { current = node.Output[0]; continue; }
            if (!Arithmetic.Contains(node.OpType) || node.Input.Count != 2) break;
            string other = node.Input[0] == current ? node.Input[1] : node.Input[0];
            // Per-channel (or one) constants only: a learnt full-size bias is part of the model, not a recipe.
            if (!constants.TryGetValue(other, out long size) || size > 3) break;
            found.Add($"{node.OpType} '{node.Name}'");
            current = node.Output[0];
        }
        return found;
    }
}
