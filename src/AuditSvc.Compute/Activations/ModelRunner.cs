using AuditSvc.Compute.Models;
using AuditSvc.Core.Models;
using Microsoft.ML.OnnxRuntime;

namespace AuditSvc.Compute.Activations;

/// <summary>
/// One ONNX Runtime session over the rewritten model (class output first, then the read layers), run on
/// buffers the caller owns. Every OrtValue is disposed before the call returns; outputs are handed to a callback
/// while they are alive so nothing holds a span past its value's life.
/// </summary>
public sealed class ModelRunner : IDisposable
{
    private readonly InferenceSession _session;
    private readonly RunOptions _runOptions = new();
    private readonly string[] _inputNames;
    private readonly string[] _outputNames;

    /// <param name="reduced">The model was rewritten by <see cref="ReducedGraph.Rewrite"/>: its layer outputs are
    /// [max, argmax] pairs for 4-D layers (see <see cref="ReducedGraph.OutputNames"/>).</param>
    public ModelRunner(ModelPlan plan, byte[] onnx, int threads, bool spinning = true, bool reduced = false)
        : this(plan, options => new InferenceSession(onnx, options), threads, spinning, reduced)
    {
    }

    /// <summary>A runner over the model that <paramref name="writeModel"/> writes, read by the runtime from a
    /// temporary file (<see cref="SessionFiles"/>) rather than from an array in memory.</summary>
    internal ModelRunner(ModelPlan plan, Action<Stream> writeModel, int threads, bool spinning = true, bool reduced = false)
        : this(plan, options => SessionFiles.Build(writeModel, options), threads, spinning, reduced)
    {
    }

    private ModelRunner(ModelPlan plan, Func<SessionOptions, InferenceSession> build, int threads, bool spinning, bool reduced)
    {
        Plan = plan;
        using var options = new SessionOptions
        {
            IntraOpNumThreads = Math.Max(1, threads),
            InterOpNumThreads = 1,
            ExecutionMode = ExecutionMode.ORT_SEQUENTIAL,
            GraphOptimizationLevel = GraphOptimizationLevel.ORT_ENABLE_ALL,
        };
        // Spinning keeps a core busy between kernels; when decoders share the cores it takes their time.
        options.AddSessionConfigEntry("session.intra_op.allow_spinning", spinning ? "1" : "0");
        // No collection here: the service builds a runner per chunk job, and a blocking compacting collection would
        // pause the whole process each time. The intake and the command line's audit give memory back once, where it pays.
        OrtEnvironment.EnsureQuiet();
        _session = build(options);
        _inputNames = [plan.InputName];
        _outputNames = [plan.OutputName, .. reduced ? ReducedGraph.OutputNames(plan.ReadLayers) : plan.ReadLayers.Select(l => l.ReadName)];
        Reduced = reduced;
        Channels = (int)(_session.InputMetadata[plan.InputName].Dimensions is { Length: 4 } d && d[1] > 0 ? d[1] : 3);
    }

    public ModelPlan Plan { get; }

    /// <summary>True when the layer outputs are the in-graph maxima and arg-maxima, not the full maps.</summary>
    public bool Reduced { get; }

    /// <summary>Input channels (3 for colour models, 1 for grey).</summary>
    public int Channels { get; }

    public delegate void OutputHandler(ReadOnlySpan<float> classScores, IReadOnlyList<OrtValue> layers);

    /// <summary>Runs <paramref name="count"/> images held in <paramref name="input"/> (NCHW) and hands the outputs over.</summary>
    public void Run(Memory<float> input, int count, OutputHandler handle, bool readLayers = true)
    {
        var shape = new long[] { count, Channels, Plan.Recipe.Height, Plan.Recipe.Width };
        using var value = OrtValue.CreateTensorValueFromMemory(OrtMemoryInfo.DefaultInstance, input[..(count * Channels * Plan.Recipe.Height * Plan.Recipe.Width)], shape);
        var names = readLayers ? _outputNames : _outputNames[..1];
        using var outputs = _session.Run(_runOptions, _inputNames, [value], names);
        handle(outputs[0].GetTensorDataAsSpan<float>(), readLayers ? outputs.Skip(1).ToArray() : []);
    }

    public void Dispose()
    {
        _session.Dispose();
        _runOptions.Dispose();
    }
}
