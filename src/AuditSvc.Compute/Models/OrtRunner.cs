using System.Runtime.InteropServices;
using Google.Protobuf;
using Microsoft.ML.OnnxRuntime;
using Microsoft.ML.OnnxRuntime.Tensors;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>A float tensor copied out of ONNX Runtime.</summary>
public sealed record FloatTensor(long[] Shape, float[] Data);

/// <summary>Small one-shot ONNX Runtime runs used by the intake (shape probe, batch check, tests).</summary>
public static partial class OrtRunner
{
    /// <summary>
    /// Runs the model once on <paramref name="input"/> and copies out every float tensor output;
    /// outputs of other types are skipped. Optimisations are off so no requested tensor is fused away.
    /// </summary>
    public static IReadOnlyDictionary<string, FloatTensor> Run(
        byte[] model, string inputName, FloatTensor input, IReadOnlyList<string>? outputNames = null,
        GraphOptimizationLevel level = GraphOptimizationLevel.ORT_DISABLE_ALL) =>
        RunEach(model, inputName, [input], outputNames, level)[0];

    /// <summary>
    /// <see cref="Run(byte[], string, FloatTensor, IReadOnlyList{string}?, GraphOptimizationLevel)"/> on each of <paramref name="inputs"/> in turn, with one session: the session holds a copy of
    /// the weights, so one per input would cost a copy per input.
    /// </summary>
    public static IReadOnlyList<IReadOnlyDictionary<string, FloatTensor>> RunEach(
        byte[] model, string inputName, IReadOnlyList<FloatTensor> inputs, IReadOnlyList<string>? outputNames = null,
        GraphOptimizationLevel level = GraphOptimizationLevel.ORT_DISABLE_ALL) =>
        RunEach(options => new InferenceSession(model, options), inputName, inputs, outputNames, level);

    /// <summary><see cref="Run(byte[], string, FloatTensor, IReadOnlyList{string}?, GraphOptimizationLevel)"/> on a model not yet serialised: the runtime reads it from a temporary file.</summary>
    internal static IReadOnlyDictionary<string, FloatTensor> Run(ModelProto model, string inputName, FloatTensor input) =>
        RunEach(options => SessionFiles.Build(model.WriteTo, options), inputName, [input], null, GraphOptimizationLevel.ORT_DISABLE_ALL)[0];

    /// <summary>A float output of a run, seen while its value is alive.</summary>
    internal delegate void OutputVisitor(int input, string name, ReadOnlySpan<float> data);

    /// <summary>
    /// Runs each of <paramref name="inputs"/> through one session over <paramref name="model"/> (read from a temporary
    /// file) and shows every float output to <paramref name="visit"/> without copying it out.
    /// </summary>
    internal static void Visit(ModelProto model, string inputName, IReadOnlyList<FloatTensor> inputs, OutputVisitor visit)
    {
        ArgumentNullException.ThrowIfNull(inputs);
        WithSession(options => SessionFiles.Build(model.WriteTo, options), GraphOptimizationLevel.ORT_DISABLE_ALL, session =>
        {
            for (int i = 0; i < inputs.Count; i++)
            {
                int at = i;
                Fetch(session, inputName, inputs[i], session.OutputNames, (name, r) => visit(at, name, r.GetTensorDataAsSpan<float>()));
            }
            return 0;
        });
    }

    private static IReadOnlyList<IReadOnlyDictionary<string, FloatTensor>> RunEach(
        Func<SessionOptions, InferenceSession> build, string inputName, IReadOnlyList<FloatTensor> inputs, IReadOnlyList<string>? outputNames,
        GraphOptimizationLevel level)
    {
        ArgumentNullException.ThrowIfNull(inputs);
        return WithSession(build, level, session =>
        {
            var names = outputNames ?? session.OutputNames;
            var all = new List<IReadOnlyDictionary<string, FloatTensor>>(inputs.Count);
            foreach (var input in inputs)
            {
                var copied = new Dictionary<string, FloatTensor>(StringComparer.Ordinal);
                Fetch(session, inputName, input, names, (name, r) =>
                    copied[name] = new FloatTensor(r.GetTensorTypeAndShape().Shape, r.GetTensorDataAsSpan<float>().ToArray()));
                all.Add(copied);
            }
            return all;
        });
    }

    /// <summary>
    /// Shapes of all float tensors the graph's nodes produce, from one run on a zero input with every
    /// node output exposed (robust where value_info is missing or stale). Only the shapes leave the runtime.
    /// </summary>
    public static IReadOnlyDictionary<string, long[]> ProbeShapes(ModelProto model, string inputName, long[] inputShape, bool standIns = true)
    {
        var zeros = new FloatTensor(inputShape, new float[checked((int)inputShape.Aggregate(1L, (a, b) => a * b))]);
        Func<InferenceSession, IReadOnlyDictionary<string, long[]>> read = session =>
        {
            var shapes = new Dictionary<string, long[]>(StringComparer.Ordinal);
            Fetch(session, inputName, zeros, session.OutputNames, (name, r) => shapes[name] = r.GetTensorTypeAndShape().Shape);
            return shapes;
        };
        var found = standIns ? WithStandIns(ProbeModel(model), read) : null;
        ProbedWithStandIns = found is not null;
        // No large weight, no private folder for the stand-ins, or a runtime that refused them: the real weights either
        // run or give the error that names the model's own problem.
        return found ?? WithSession(options => SessionFiles.Build(ProbeModel(model).WriteTo, options), GraphOptimizationLevel.ORT_DISABLE_ALL, read);
    }

    /// <summary>
    /// The probe with zero stand-ins for its large float weights, or null when it has none, no private folder can be
    /// made for them, or the runtime refuses them. The weights' values shape nothing: the stand-ins go to the runtime as
    /// views of one zero buffer, so they are neither written out nor read back and copied (for ResNet-18, 45 MB the
    /// runtime would take fresh pages for). The graph marks them as kept in a file beside it, which the runtime checks
    /// exists but never reads: a sparse file of the largest one's length, taking no disk.
    /// </summary>
    private static IReadOnlyDictionary<string, long[]>? WithStandIns(ModelProto probe, Func<InferenceSession, IReadOnlyDictionary<string, long[]>> read)
    {
        var large = probe.Graph.Initializer.Where(IsStandIn).ToList();
        if (large.Count == 0) return null;
        DirectoryInfo folder;
        try
        {
            folder = Directory.CreateTempSubdirectory("auditsvc-probe-");
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            return null;
        }
        var standIns = new List<(string Name, OrtValue Value)>();
        try
        {
            int most = large.Max(Count);
            var zeroWeights = new float[most];
            using (var file = new FileStream(Path.Combine(folder.FullName, StandInFile), FileMode.CreateNew)) file.SetLength(most * 4L);
            foreach (var t in large)
            {
                standIns.Add((t.Name, OrtValue.CreateTensorValueFromMemory(OrtMemoryInfo.DefaultInstance, zeroWeights.AsMemory(0, Count(t)), t.Dims.ToArray())));
                t.RawData = ByteString.Empty;
                t.DataLocation = TensorProto.Types.DataLocation.External;
                t.ExternalData.Clear();
                t.ExternalData.Add(new StringStringEntryProto { Key = "location", Value = StandInFile });
                t.ExternalData.Add(new StringStringEntryProto { Key = "length", Value = (Count(t) * 4L).ToString(System.Globalization.CultureInfo.InvariantCulture) });
            }
            // The graph's file goes beside the stand-ins' file, which its external data names relative to it.
            return WithSession(options =>
            {
                foreach (var (name, value) in standIns) options.AddInitializer(name, value);
                return SessionFiles.Build(probe.WriteTo, options, folder.FullName);
            }, GraphOptimizationLevel.ORT_DISABLE_ALL, read);
        }
        catch (OnnxRuntimeException)
        {
            return null;
        }
        finally
        {
            foreach (var (_, value) in standIns) value.Dispose();
            try { folder.Delete(recursive: true); } catch (IOException) { }
        }
    }

    private const string StandInFile = "stand-in-weights.bin";

    /// <summary>Tests: whether the last <see cref="ProbeShapes"/> on this thread ran with stand-ins for the weights.</summary>
    [ThreadStatic]
    internal static bool ProbedWithStandIns;

    // Float weights of 64 KiB or more held as raw bytes: matrices and kernels, never a shape or a scale.
    private static bool IsStandIn(TensorProto t) =>
        t.DataType == (int)TensorProto.Types.DataType.Float && t.RawData.Length >= 64 * 1024 && t.DataLocation != TensorProto.Types.DataLocation.External
        && t.Dims.All(d => d > 0) && t.RawData.Length == Count(t) * 4L;

    private static int Count(TensorProto t) => checked((int)t.Dims.Aggregate(1L, (a, b) => a * b));

    // A copy of the graph with every node output exposed; it shares the weights' byte strings with the model.
    private static ModelProto ProbeModel(ModelProto model)
    {
        var probe = model.Clone();
        var graph = probe.Graph;
        var existing = graph.Output.Select(o => o.Name).ToHashSet(StringComparer.Ordinal);
        foreach (var node in graph.Node)
            foreach (var name in node.Output)
                if (name.Length > 0 && existing.Add(name))
                    graph.Output.Add(new ValueInfoProto { Name = name });
        return probe;
    }

    private static T WithSession<T>(Func<SessionOptions, InferenceSession> build, GraphOptimizationLevel level, Func<InferenceSession, T> use)
    {
        // Failures surface as exceptions the caller handles (the batch check expects some); keep ORT's log quiet.
        using var options = new SessionOptions
        {
            GraphOptimizationLevel = level, IntraOpNumThreads = 1, InterOpNumThreads = 1,
            LogSeverityLevel = OrtLoggingLevel.ORT_LOGGING_LEVEL_FATAL,
            // One run, then gone: an arena and a memory pattern only keep blocks for runs that never come.
            EnableCpuMemArena = false, EnableMemoryPattern = false,
        };
        OrtEnvironment.EnsureQuiet();
        // What earlier steps left (parsed weights, another session's serialised copy) goes before a session is built.
        ReleaseTransient();
        using var session = build(options);
        return use(session);
    }

    // Hands each float tensor output to `take` while its value is alive; outputs of other types are skipped.
    private static void Fetch(InferenceSession session, string inputName, FloatTensor input, IReadOnlyList<string> names, Action<string, OrtValue> take)
    {
        using var value = OrtValue.CreateTensorValueFromMemory(input.Data, input.Shape);
        using var runOptions = new RunOptions();
        using var results = session.Run(runOptions, [inputName], [value], names);
        for (int i = 0; i < names.Count; i++)
        {
            var r = results[i];
            if (r.OnnxType != OnnxValueType.ONNX_TYPE_TENSOR || r.GetTensorTypeAndShape().ElementDataType != TensorElementType.Float) continue;
            take(names[i], r);
        }
    }

    /// <summary>Deterministic uniform noise in [−1, 1) for checks that must not depend on the image.</summary>
    public static FloatTensor Noise(long[] shape, int seed)
    {
        var rng = new Random(seed);
        var data = new float[checked((int)shape.Aggregate(1L, (a, b) => a * b))];
        for (int i = 0; i < data.Length; i++) data[i] = (float)(rng.NextDouble() * 2 - 1);
        return new FloatTensor(shape, data);
    }

    /// <summary>
    /// Gives memory freed by one-shot work back to the system: an aggressive collection of the managed heap (model
    /// bytes are large objects) and, on glibc, malloc_trim for what ONNX Runtime's disposed sessions freed.
    /// </summary>
    public static void ReleaseTransient()
    {
        // Aggressive: compacts the large-object heap too and decommits the free space instead of keeping it for later.
        GC.Collect(GC.MaxGeneration, GCCollectionMode.Aggressive, blocking: true, compacting: true);
        GC.WaitForPendingFinalizers();
        if (!OperatingSystem.IsLinux()) return;
        try
        {
            _ = MallocTrim(0);
        }
        catch (Exception e) when (e is DllNotFoundException or EntryPointNotFoundException)
        {
            // Not glibc (musl, say): nothing to trim.
        }
    }

    [LibraryImport("libc", EntryPoint = "malloc_trim")]
    private static partial int MallocTrim(nuint pad);
}
