using System.CommandLine;
using System.Globalization;
using System.Text.Json;
using AuditSvc.Compute.Bench;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Models;

namespace AuditSvc.Cli.Commands;

/// <summary>`inspect`: the model's input, recipe, batch mode and readable layers with receptive fields.</summary>
internal static class InspectCommand
{
    private static readonly JsonSerializerOptions Json = new()
    {
        WriteIndented = true,
        PropertyNamingPolicy = JsonNamingPolicy.SnakeCaseLower,
    };

    public static Command Create()
    {
        var modelOpt = new Option<string>("--model") { Description = "ONNX model file", Required = true };
        var layersOpt = new Option<string?>("--layers") { Description = "Comma-separated tensor names to read instead of the defaults" };
        var sizeOpt = new Option<string?>("--size") { Description = "Input size, N or WxH (needed when the model's input size is symbolic)" };
        var jsonOpt = new Option<bool>("--json") { Description = "Print JSON instead of text" };
        var memoryOpt = new Option<bool>("--memory") { Description = "Measure instead the resident memory of the intake and of building the pass on this model (peak and after each step)" };
        var cmd = new Command("inspect", "Show a model's input, recipe, batch mode and layers with receptive fields")
        {
            modelOpt, layersOpt, sizeOpt, jsonOpt, memoryOpt,
        };
        cmd.SetAction(parse =>
        {
            try
            {
                return Run(parse, modelOpt, layersOpt, sizeOpt, jsonOpt, memoryOpt);
            }
            catch (AuditInputException e)
            {
                // System.CommandLine's default handler would report this as a crash with status 1.
                Console.Error.WriteLine($"error: {e.Message}");
                return ExitCodes.BadInput;
            }
        });
        return cmd;
    }

    private static int Run(ParseResult parse, Option<string> modelOpt, Option<string?> layersOpt, Option<string?> sizeOpt, Option<bool> jsonOpt, Option<bool> memoryOpt)
    {
        var (width, height) = ParseSize(parse.GetValue(sizeOpt));
        var layers = parse.GetValue(layersOpt)?.Split(',', StringSplitOptions.RemoveEmptyEntries | StringSplitOptions.TrimEntries);
        var options = new ModelLoadOptions(layers, new RecipeOverrides(Width: width, Height: height));
        if (parse.GetValue(memoryOpt))
        {
            Console.Out.Write(ToText(IntakeMemory.Measure(parse.GetValue(modelOpt)!, options)));
            return ExitCodes.Pass;
        }
        var plan = ModelIntake.Load(parse.GetValue(modelOpt)!, options).Plan;
        Console.Out.Write(parse.GetValue(jsonOpt) ? ToJson(plan) : ToText(plan));
        return ExitCodes.Pass;
    }

    internal static string ToText(IntakeMemoryResult r)
    {
        var w = new StringWriter(CultureInfo.InvariantCulture);
        w.WriteLine($"model    {r.Model} ({r.ModelFileBytes >> 20} MB on disk); {r.StartBytes >> 20} MB resident before the intake, {r.RuntimeBytes >> 20} MB with ONNX Runtime loaded");
        w.WriteLine("step                                   peak MB  resident MB  seconds");
        foreach (var s in r.Steps) w.WriteLine($"{s.Step,-38} {s.PeakBytes >> 20,7}  {s.ResidentBytes >> 20,11}  {s.Seconds,7:0.00}");
        w.WriteLine($"highest peak {r.PeakBytes >> 20} MB = {(double)r.PeakBytes / r.ModelFileBytes:0.0}x the model file; " +
            $"above the runtime {r.ModelPeakBytes >> 20} MB = {(double)r.ModelPeakBytes / r.ModelFileBytes:0.0}x the model file");
        return w.ToString();
    }

    internal static (int? Width, int? Height) ParseSize(string? text)
    {
        if (string.IsNullOrWhiteSpace(text)) return (null, null);
        var parts = text.Split('x', 'X');
        if (parts.Length is 1 or 2 && parts.All(p => int.TryParse(p, NumberStyles.None, CultureInfo.InvariantCulture, out int v) && v > 0))
        {
            int w = int.Parse(parts[0], CultureInfo.InvariantCulture);
            return (w, parts.Length == 2 ? int.Parse(parts[1], CultureInfo.InvariantCulture) : w);
        }
        throw new AuditInputException("--size", $"'{text}' is not a size; give N or WxH, e.g. 224 or 320x240");
    }

    private static string F(double v) => v.ToString("0.##", CultureInfo.InvariantCulture);
    private static string Fs(float[] v) => string.Join(", ", v.Select(x => x.ToString("0.###", CultureInfo.InvariantCulture)));

    private static string Field(RfAxis y, RfAxis x) => y == x
        ? $"{F(x.Size)} / {F(x.Jump)} / {F(x.Offset)}"
        : $"{F(y.Size)}x{F(x.Size)} / {F(y.Jump)}x{F(x.Jump)} / {F(y.Offset)}x{F(x.Offset)}";

    internal static string ToText(ModelPlan plan)
    {
        var r = plan.Recipe;
        var w = new StringWriter(CultureInfo.InvariantCulture);
        w.WriteLine($"model    {plan.ModelPath}");
        w.WriteLine($"sha256   {plan.Sha256}");
        w.WriteLine($"input    {plan.InputName}: {r.Width}x{r.Height}, {r.Mean.Length} channel(s)");
        w.WriteLine($"recipe   resize {Name(r.Resize)}, pixels 0..{F(r.PixelScale)}, mean [{Fs(r.Mean)}], std [{Fs(r.Std)}], {r.Order.ToString().ToUpperInvariant()}");
        w.WriteLine($"output   {plan.OutputName}: {plan.ClassCount} classes{(plan.OutputIsProbabilities ? " (probabilities)" : " (logits)")}" +
            (plan.Recipe.ClassNames is null ? "" : $": {string.Join(", ", plan.ClassNames)}"));
        w.WriteLine($"batch    {(plan.Batch == BatchMode.Batched ? "batched" : "concurrent batch-1 runs")}");
        w.WriteLine();
        var rows = plan.Layers.Select(l => new[]
        {
            plan.ReadLayers.Any(x => x.Name == l.Name) ? "*" : "",
            l.Name, l.OpType, AuditAssembler.LayoutName(l.Layout),
            l.Rank == 4 ? $"{l.Channels}x{l.Height}x{l.Width}" : $"{l.Channels}",
            l.Rank == 2 ? "whole image" : Field(l.Field.Y, l.Field.X) + (l.Layout == LayerLayout.Tokens ? " patch" : "") + (l.Field.Global && l.Height * l.Width > 1 ? " +global" : ""),
            l.IsDefault ? "default" : "",
        }).ToList();
        rows.Insert(0, ["read", "layer", "op", "layout", "CxHxW (units x places)", "field size / jump / offset", "default"]);
        int[] widths = Enumerable.Range(0, 7).Select(c => rows.Max(row => row[c].Length)).ToArray();
        foreach (var row in rows)
            w.WriteLine(string.Join("  ", row.Select((cell, c) => cell.PadRight(widths[c]))).TrimEnd());
        w.WriteLine();
        w.WriteLine("why these layers: the last activation or block output (residual addition, branch concatenation) at each resolution, the residual stream after each transformer block, and the features feeding the classifier");
        foreach (var g in plan.ReadLayers.Where(l => l.Rank == 4).GroupBy(l => l.PlaceNote))
            w.WriteLine($"crops    {g.Count()} read layer(s): {g.Key}");
        if (plan.Layers.Any(l => l.Field.Global && l.Height * l.Width > 1))
            w.WriteLine("+global  a path that has seen the whole image (squeeze-excitation, attention) feeds these places: the box is where the place sits, the true field is the whole image");
        foreach (var note in plan.Notes) w.WriteLine($"note     {note}");
        if (plan.Skipped.Count > 0)
        {
            w.WriteLine($"not read {plan.Skipped.Count} tensor(s) of rank 3 or more:");
            foreach (var s in plan.Skipped.Take(MaxSkippedShown))
                w.WriteLine($"  {s.Name} [{string.Join(",", s.Shape)}] from node '{s.Node}' ({s.OpType}): {s.Reason}");
            if (plan.Skipped.Count > MaxSkippedShown) w.WriteLine($"  … and {plan.Skipped.Count - MaxSkippedShown} more (--json lists them all)");
        }
        return w.ToString();
    }

    private const int MaxSkippedShown = 12;

    private static string Name(ResizeMode m) => m == ResizeMode.Stretch ? "stretch" : "shorter-side-center-crop";

    internal static string ToJson(ModelPlan plan)
    {
        var r = plan.Recipe;
        var read = plan.ReadLayers.Select(l => l.Name).ToHashSet(StringComparer.Ordinal);
        var doc = new
        {
            Model = plan.ModelPath,
            plan.Sha256,
            Input = new { Name = plan.InputName, r.Width, r.Height, Channels = r.Mean.Length },
            Recipe = new
            {
                r.Width, r.Height, Resize = Name(r.Resize), r.PixelScale, r.Mean, r.Std,
                ChannelOrder = r.Order.ToString().ToLowerInvariant(), r.ClassNames,
            },
            Output = new { Name = plan.OutputName, plan.ClassCount, plan.OutputIsProbabilities },
            Batch = plan.Batch == BatchMode.Batched ? "batched" : "concurrent-single",
            Layers = plan.Layers.Select(l => new
            {
                l.Name, Op = l.OpType, l.Rank, Layout = AuditAssembler.LayoutName(l.Layout), l.Channels, l.Height, l.Width, l.PrefixTokens,
                Field = new { Y = Axis(l.Field.Y), X = Axis(l.Field.X), l.Field.Global },
                Place = l.PlaceNote,
                l.IsDefault, Read = read.Contains(l.Name),
            }),
            ReadLayers = plan.ReadLayers.Select(l => l.Name),
            plan.Notes,
            NotRead = plan.Skipped.Select(s => new { s.Name, s.Node, Op = s.OpType, s.Shape, s.Reason }),
        };
        return JsonSerializer.Serialize(doc, Json) + Environment.NewLine;
    }

    private static object Axis(RfAxis a) => new { a.Size, a.Jump, a.Offset };
}
