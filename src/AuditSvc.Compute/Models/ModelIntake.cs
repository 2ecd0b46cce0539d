using System.Security.Cryptography;
using AuditSvc.Core;
using AuditSvc.Core.Models;
using Google.Protobuf;
using Microsoft.ML.OnnxRuntime;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>How to load a model.</summary>
/// <param name="Layers">Tensor names to read instead of the defaults.</param>
/// <param name="Recipe">Explicit recipe settings; they win over the recipe file beside the model.</param>
/// <param name="CheckBatch">When the batch dimension is fixed at 1, test whether it can be freed.</param>
/// <param name="BatchCheckOnPass">With <paramref name="CheckBatch"/>: free a batch fixed at 1 without testing it here and
/// leave the test to the activation pass, which runs it on its own session before its first batch
/// (<see cref="ModelPlan.BatchUnchecked"/>). An in-process audit does this: it spares the intake two sessions of its own.</param>
public sealed record ModelLoadOptions(IReadOnlyList<string>? Layers = null, RecipeOverrides? Recipe = null, bool CheckBatch = true,
    bool BatchCheckOnPass = false);

/// <summary>A checked model: its plan, and the rewritten ONNX bytes whose outputs are
/// [class output, <see cref="ModelPlan.ReadLayers"/> in that order].</summary>
public sealed record LoadedModel(ModelPlan Plan, byte[] RewrittenModel);

/// <summary>
/// Model intake: checks an ONNX file, resolves its input recipe, catalogues its layers with receptive
/// fields, picks the layers to read and rewrites the graph to expose them.
/// </summary>
public static class ModelIntake
{
    /// <summary>Loads and checks the model; throws <see cref="AuditInputException"/> naming the file and field on bad input.</summary>
    public static LoadedModel Load(string modelPath, ModelLoadOptions? options = null)
    {
        ArgumentNullException.ThrowIfNull(modelPath);
        options ??= new ModelLoadOptions();
        if (!File.Exists(modelPath)) throw new AuditInputException(modelPath, "model file not found");
        long length = new FileInfo(modelPath).Length;
        if (length > OnnxGuard.MaxModelBytes)
            throw new AuditInputException(modelPath, $"the model file is {length} bytes, over the limit of {OnnxGuard.MaxModelBytes} bytes");
        // The parsed model and its rewritten copies live only inside Plan: from here on only the rewritten bytes do.
        var (plan, rewritten, imageShape) = Plan(modelPath, options);
        var read = plan.ReadLayers;
        if (read.Any(l => l.ReadName != l.Name))
        {
            // The channels-first views are nodes the intake added: one run at intake proves the runtime takes them.
            var views = string.Join(", ", read.Where(l => l.ReadName != l.Name).Select(l => $"'{l.Name}'"));
            Guarded(modelPath, () => OrtRunner.Run(rewritten, plan.InputName,
                new FloatTensor(imageShape, new float[checked((int)imageShape.Aggregate(1L, (a, b) => a * b))])), $"reading layers {views} through a channels-first view");
        }
        // The parsed model, its copies and the one-shot sessions are garbage now: give their memory back before the
        // caller builds the pass's session, whose optimiser needs several times the model's size for a moment.
        OrtRunner.ReleaseTransient();
        return new LoadedModel(plan, rewritten);
    }

    private static (ModelPlan Plan, byte[] Rewritten, long[] ImageShape) Plan(string modelPath, ModelLoadOptions options)
    {
        var (model, sha256) = ParseHashed(modelPath);
        OnnxGuard.RejectExternalData(modelPath, model);
        RawWeights.Pack(model.Graph);
        // What parsing and packing left behind goes when the probe's session is built (OrtRunner collects first).
        Audits.MemoryTrace.Mark("model parsed");
        var input = OnnxGuard.ImageInputOf(modelPath, model);
        if (input.Batch is > 1)
            throw new AuditInputException(modelPath,
                $"graph input '{input.Name}' has its batch dimension fixed at {input.Batch} (field 'shape', dimension 0); export it with batch 1 or a symbolic batch");
        var notes = new List<string>();
        if (input.ChannelsLast)
        {
            string original = input.Name;
            input = input with { Name = GraphAdapters.ChannelsFirstInput(model, original) };
            notes.Add($"channels-last input '{original}' [N,H,W,{input.Channels}]: the intake feeds it through a Transpose from [N,{input.Channels},H,W]");
        }
        var normalisers = InputNormalisation.Detect(model.Graph, input.Name);

        var recipePath = RecipeLoader.RecipePathFor(modelPath);
        var fileRecipe = RecipeLoader.ReadFile(recipePath);
        var recipe = RecipeLoader.Resolve(input, fileRecipe, options.Recipe, recipePath, graphNormalises: normalisers.Count > 0);
        if (normalisers.Count > 0)
        {
            bool given = (options.Recipe?.Mean ?? options.Recipe?.Std ?? fileRecipe?.Mean ?? fileRecipe?.Std) is not null;
            notes.Add(given
                ? $"the graph normalises its own input ({string.Join(", ", normalisers)}) and the recipe also applies mean/std: check that this double normalisation is intended"
                : $"the graph normalises its own input ({string.Join(", ", normalisers)}): the recipe passes pixels 0..1 with mean 0 and std 1, so nothing is normalised twice");
        }
        long[] imageShape = [1, input.Channels, recipe.Height, recipe.Width];

        var graph = model.Graph;
        if (graph.Output.Count == 0) throw new AuditInputException(modelPath, "the graph has no outputs (field 'output')");
        string classOutput = graph.Output[0].Name;
        var shapes = Guarded(modelPath, () => OrtRunner.ProbeShapes(model, input.Name, imageShape));
        // The probe's session is gone; its memory goes before the next session is built (OrtRunner collects first) or,
        // when there is none, at the end of the intake.
        Audits.MemoryTrace.Mark("shapes probed");
        if (!shapes.TryGetValue(classOutput, out var classShape) || classShape.Length < 2)
            throw new AuditInputException(modelPath, $"the first graph output '{classOutput}' is not a float tensor [N, classes] (field 'output')");
        int classCount = checked((int)classShape.Skip(1).Aggregate(1L, (a, b) => a * b));
        var producer = graph.Node.FirstOrDefault(n => n.Output.Contains(classOutput));
        bool probabilities = producer?.OpType == "Softmax";

        var skipped = new List<SkippedTensor>();
        var candidates = LayerCatalog.Candidates(graph, input.Name, shapes, recipe.Height, recipe.Width, skipped, input.Channels);
        if (candidates.Count == 0)
            throw new AuditInputException(modelPath, "the graph has no readable layers (float tensors [N,C,H,W], [N,H,W,C], patch tokens [N,T,C] or [N,C] computed from the image)");
        var layers = LayerCatalog.MarkDefaults(graph, candidates, classOutput);
        var read = options.Layers is { Count: > 0 } wanted
            ? LayerCatalog.Select(modelPath, layers, wanted, skipped)
            : layers.Where(l => l.IsDefault).ToList();

        string readOutput = classOutput;
        if (classCount == 1)
        {
            // One output: a binary classifier's sigmoid probability or logit, read as two classes [negative, positive].
            probabilities = producer?.OpType == "Sigmoid";
            readOutput = GraphAdapters.TwoClassOutput(model, classOutput, probabilities);
            classCount = 2;
            notes.Add($"single output '{classOutput}' ({(probabilities ? "a sigmoid probability" : "a logit")}): read as two classes, 0 = negative, 1 = positive");
        }
        if (recipe.ClassNames is { } names && names.Count != classCount)
            throw new AuditInputException(options.Recipe?.ClassNames is null ? recipePath : "--labels",
                $"field 'class_names' has {names.Count} names, the model's output '{classOutput}' has {classCount} classes");

        var batchMode = BatchMode.Batched;
        bool batchUnchecked = input.Batch == 1 && options.CheckBatch && options.BatchCheckOnPass;
        // A fixed batch freed unchecked: the pass tests it on its own session, and at batch 1 this graph computes what
        // the file's does (only the declared batch differs), so the pass can still fall back to one image per run.
        var single = GraphRewriter.ExposeLayers(model, input.Name, readOutput, read, symbolicBatch: input.Batch is null || batchUnchecked);
        var rewritten = single;
        if (input.Batch == 1 && !batchUnchecked)
        {
            var batched = GraphRewriter.ExposeLayers(model, input.Name, readOutput, read, symbolicBatch: true);
            bool free = options.CheckBatch
                && Guarded(modelPath, () => GraphRewriter.BatchMatchesSingles(single, batched, input.Name, imageShape));
            OrtRunner.ReleaseTransient();
            Audits.MemoryTrace.Mark("batch checked");
            if (free) rewritten = batched;
            else batchMode = BatchMode.ConcurrentSingle;
        }

        var plan = new ModelPlan(
            Path.GetFullPath(modelPath),
            sha256,
            input.Name, readOutput, classCount, recipe, layers, batchMode,
            OutputIsProbabilities: probabilities)
        {
            ReadLayers = read,
            BatchUnchecked = batchUnchecked,
            Notes = notes,
            Skipped = skipped,
        };
        return (plan, rewritten.ToByteArray(), imageShape);
    }

    // One read of the file's payloads: the hash is of exactly the bytes parsed. A first walk over tags and lengths only
    // finds the packed float weights, which the parser then reads as raw_data (RawWeightTags); the swap sits after the
    // hash, so the hash stays the file's. With retag off (tests), the file is parsed as it is.
    internal static (ModelProto Model, string Sha256) ParseHashed(string modelPath, bool retag = true)
    {
        using var file = new FileStream(modelPath, FileMode.Open, FileAccess.Read, FileShare.Read, bufferSize: 1 << 16);
        long[]? tags = retag ? RawWeightTags.Find(file) : null;
        file.Position = 0;
        using var sha = SHA256.Create();
        ModelProto model;
        using (var hashing = new CryptoStream(file, sha, CryptoStreamMode.Read, leaveOpen: true))
        {
            model = OnnxGuard.Parse(modelPath, tags is { Length: > 0 } ? new RawWeightTags.Retagged(hashing, tags) : hashing);
            hashing.CopyTo(Stream.Null);
        }
        return (model, Convert.ToHexStringLower(sha.Hash!));
    }

    // ONNX Runtime refusing the graph is a problem with the file, not with the service.
    private static T Guarded<T>(string modelPath, Func<T> run, string? doing = null)
    {
        try
        {
            return run();
        }
        catch (OnnxRuntimeException e)
        {
            throw new AuditInputException(modelPath, $"ONNX Runtime cannot run the model{(doing is null ? "" : " " + doing)} ({e.Message})", e);
        }
    }
}
