using System.CommandLine;
using System.Globalization;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Core.Gate;

namespace AuditSvc.Cli.Commands;

/// <summary>`audit`: the main job in-process; writes audit.json and report.html, exits 0 pass / 1 block / 2 bad input.</summary>
internal static class AuditCommand
{
    public static Command Create()
    {
        var model = new Option<FileInfo>("--model") { Description = "The ONNX image classifier", Required = true };
        var data = new Option<string>("--data") { Description = "The image set: a manifest .csv, a class-per-folder tree, or a .zip of either", Required = true };
        var output = new Option<DirectoryInfo>("--out") { Description = "Folder for audit.json and report.html", DefaultValueFactory = _ => new DirectoryInfo("audit-out") }.MustNotBeAFile();
        var opts = new ModelFlags();
        var policy = new Option<FileInfo?>("--policy") { Description = "Policy file (JSON; see schemas/policy.schema.json)" };
        var batch = new Option<int>("--batch") { Description = "Images per model run (0 = choose)" }.Batch();
        var threads = new Option<int>("--threads") { Description = "ONNX Runtime threads (0 = all cores)" }.Threads();
        var scoresMemory = new Option<int>("--scores-memory")
        {
            Description = "MiB of the scores matrix (images × units, float16) kept in memory; past it, finished blocks go to a spill folder under --out",
            DefaultValueFactory = _ => 512,
        }.Within(16, 1 << 20, "MiB");
        var imagesRoot = new Option<DirectoryInfo?>("--images-root")
        {
            Description = "A folder manifest rows may also lead into (absolute paths included); without it, rows stay inside the manifest's folder",
        };
        var cmd = new Command("audit", "Audit a model and a labelled image set for shortcut cues; writes audit.json and report.html. Exit 0 pass, 1 block, 2 bad input.")
        {
            model, data, output, policy, batch, threads, scoresMemory, imagesRoot,
        };
        opts.AddTo(cmd);
        cmd.SetAction((parse, ct) =>
        {
            var pol = parse.GetValue(policy) is { } pf ? PolicyFile.Load(pf.FullName) : new AuditPolicy();
            var request = new AuditRequest(parse.GetValue(model)!.FullName, parse.GetValue(data)!, opts.Read(parse), pol,
                new PassOptions { BatchSize = parse.GetValue(batch), InferenceThreads = parse.GetValue(threads), ScoreMemoryLimitBytes = (long)parse.GetValue(scoresMemory) << 20 },
                Path.Combine(parse.GetValue(output)!.FullName, ".work"), parse.GetValue(imagesRoot)?.FullName);
            return Task.FromResult(AuditRunner.RunAndWrite(request, parse.GetValue(output)!.FullName, ct));
        });
        return cmd;
    }
}

/// <summary>The model and recipe flags shared by `audit` and `inspect`.</summary>
internal sealed class ModelFlags
{
    public readonly Option<string?> Labels = new("--labels") { Description = "Class names in output order, comma-separated" };
    public readonly Option<string?> Size = new("--size") { Description = "Input size: N or WxH" };
    public readonly Option<string?> Mean = new("--mean") { Description = "Per-channel mean on 0..1 pixels, comma-separated (default ImageNet's)" };
    public readonly Option<string?> Std = new("--std") { Description = "Per-channel standard deviation, comma-separated (default ImageNet's)" };
    public readonly Option<string?> Layers = new("--layers") { Description = "Tensor names to read, comma-separated (default: chosen from the graph)" };
    public readonly Option<bool> CenterCrop = new("--center-crop") { Description = "Resize the shorter side and crop the centre (default: scale the whole image)" };
    public readonly Option<bool> Bgr = new("--bgr") { Description = "The model takes BGR channel order" };

    public void AddTo(Command cmd)
    {
        foreach (var o in new Option[] { Labels, Size, Mean, Std, Layers, CenterCrop, Bgr }) cmd.Options.Add(o);
    }

    public ModelLoadOptions Read(ParseResult parse)
    {
        var (w, h) = InspectCommand.ParseSize(parse.GetValue(Size));
        var recipe = new RecipeOverrides(
            Width: w, Height: h,
            Resize: parse.GetValue(CenterCrop) ? Core.Models.ResizeMode.ShorterSideCenterCrop : null,
            Mean: Floats(parse.GetValue(Mean), "--mean"), Std: Floats(parse.GetValue(Std), "--std"),
            Order: parse.GetValue(Bgr) ? Core.Models.ChannelOrder.Bgr : null,
            ClassNames: DistinctNames(List(parse.GetValue(Labels))));
        return new ModelLoadOptions(Layers: List(parse.GetValue(Layers)), Recipe: recipe);
    }

    private static string[]? List(string? s) => string.IsNullOrWhiteSpace(s) ? null : s.Split(',', StringSplitOptions.TrimEntries | StringSplitOptions.RemoveEmptyEntries);

    private static string[]? DistinctNames(string[]? names)
    {
        if (names?.GroupBy(n => n, StringComparer.Ordinal).FirstOrDefault(g => g.Count() > 1) is { } twice)
            throw new AuditInputException("--labels", $"class name '{twice.Key}' is given {twice.Count()} times: each output needs its own name");
        return names;
    }

    private static float[]? Floats(string? s, string flag)
    {
        if (List(s) is not { } parts) return null;
        var values = new float[parts.Length];
        for (int i = 0; i < parts.Length; i++)
            if (!float.TryParse(parts[i], NumberStyles.Float, CultureInfo.InvariantCulture, out values[i]))
                throw new AuditInputException(flag, $"'{parts[i]}' is not a number");
        if (values.Length is not (1 or 3)) throw new AuditInputException(flag, "give 1 or 3 numbers");
        return values;
    }
}
