using Google.Protobuf;
using Microsoft.ML.OnnxRuntime;
using Microsoft.ML.OnnxRuntime.Tensors;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>A float tensor copied out of ONNX Runtime.</summary>
public sealed record FloatTensor(long[] Shape, float[] Data);

/// <summary>Small one-shot ONNX Runtime runs used by the intake (shape probe, batch check, tests).</summary>
public static class OrtRunner
{
    /// <summary>
    /// Runs the model once on <paramref name="input"/> and copies out every float tensor output;
    /// outputs of other types are skipped. Optimisations are off so no requested tensor is fused away.
    /// </summary>
    public static IReadOnlyDictionary<string, FloatTensor> Run(
        byte[] model, string inputName, FloatTensor input, IReadOnlyList<string>? outputNames = null,
        GraphOptimizationLevel level = GraphOptimizationLevel.ORT_DISABLE_ALL)
    {
        // Failures surface as exceptions the caller handles (the batch check expects some); keep ORT's log quiet.
        using var options = new SessionOptions
        {
            GraphOptimizationLevel = level, IntraOpNumThreads = 1, InterOpNumThreads = 1,
            LogSeverityLevel = OrtLoggingLevel.ORT_LOGGING_LEVEL_FATAL,
        };
        OrtEnvironment.EnsureQuiet();
        using var session = new InferenceSession(model, options);
        var names = outputNames ?? session.OutputNames;
        using var value = OrtValue.CreateTensorValueFromMemory(input.Data, input.Shape);
        using var runOptions = new RunOptions();
        using var results = session.Run(runOptions, [inputName], [value], names);
        var copied = new Dictionary<string, FloatTensor>(StringComparer.Ordinal);
        for (int i = 0; i < names.Count; i++)
        {
            var r = results[i];
            if (r.OnnxType != OnnxValueType.ONNX_TYPE_TENSOR) continue;
            var info = r.GetTensorTypeAndShape();
            if (info.ElementDataType != TensorElementType.Float) continue;
            copied[names[i]] = new FloatTensor(info.Shape, r.GetTensorDataAsSpan<float>().ToArray());
        }
        return copied;
    }

    /// <summary>
    /// Shapes of all float tensors the graph's nodes produce, from one run on a zero input with every
    /// node output exposed (robust where value_info is missing or stale).
    /// </summary>
    public static IReadOnlyDictionary<string, long[]> ProbeShapes(ModelProto model, string inputName, long[] inputShape)
    {
        var probe = model.Clone();
        var graph = probe.Graph;
        var existing = graph.Output.Select(o => o.Name).ToHashSet(StringComparer.Ordinal);
        foreach (var node in graph.Node)
            foreach (var name in node.Output)
                if (name.Length > 0 && existing.Add(name))
                    graph.Output.Add(new ValueInfoProto { Name = name });
        var zeros = new FloatTensor(inputShape, new float[checked((int)inputShape.Aggregate(1L, (a, b) => a * b))]);
        var outputs = Run(probe.ToByteArray(), inputName, zeros);
        return outputs.ToDictionary(kv => kv.Key, kv => kv.Value.Shape, StringComparer.Ordinal);
    }

    /// <summary>Deterministic uniform noise in [−1, 1) for checks that must not depend on the image.</summary>
    public static FloatTensor Noise(long[] shape, int seed)
    {
        var rng = new Random(seed);
        var data = new float[checked((int)shape.Aggregate(1L, (a, b) => a * b))];
        for (int i = 0; i < data.Length; i++) data[i] = (float)(rng.NextDouble() * 2 - 1);
        return new FloatTensor(shape, data);
    }
}
