using System.CommandLine;
using System.Globalization;
using System.Text.Json;
using AuditSvc.Compute.Bench;
using AuditSvc.Core;

namespace AuditSvc.Cli.Commands;

/// <summary>`bench`: throughput and memory of the activation pass against raw inference, one run, as ratios.</summary>
internal static class BenchCommand
{
    /// <summary>The default model: ResNet-18 from the pinned NuGet package, copied beside the binary at build.</summary>
    internal static readonly string DefaultModel = Path.Combine(AppContext.BaseDirectory, "bench-models", "resnet18.onnx");

    private static readonly string DemoModel = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    public static Command Create()
    {
        var model = new Option<string?>("--model") { Description = "ONNX model (default: the ResNet-18 from the bench package, else the demo model)" };
        var images = new Option<int>("--images") { Description = "Images N per phase; memory is also measured at 10×N", DefaultValueFactory = _ => 200 };
        var batch = new Option<int>("--batch") { Description = "Images per model run (0 = chosen automatically)" }.Batch();
        var threads = new Option<int>("--threads") { Description = "Inference and decode threads (0 = all cores)" }.Threads();
        var size = new Option<string?>("--size") { Description = "Generated photo size WxH (default 500x375)" };
        var json = new Option<bool>("--json") { Description = "End with one JSON object on the last line" };
        var factor = new Option<int>("--memory-factor") { Description = "Memory is compared at N and at this multiple of N", DefaultValueFactory = _ => 10 };
        var rounds = new Option<int>("--rounds") { Description = "Alternating rounds of raw and pass timing; the best of each is kept", DefaultValueFactory = _ => 5 };
        var torch = new Option<string?>("--torch") { Description = "Eager-mode comparison script to run on the same images (bench/torch_hooks.py)" };
        var decodeThreads = new Option<int>("--decode-threads") { Description = "Decode threads, when not those of --threads (0 = chosen automatically)" }.Threads();
        var spinning = new Option<bool?>("--spinning") { Description = "Let ONNX Runtime threads spin between kernels (default: chosen automatically, off)" };
        var work = new Option<string?>("--work") { Description = "Folder for the generated photos, kept after the run (default: a temporary folder, removed)" };
        var minSeconds = new Option<double>("--min-seconds") { Description = "Each timed phase repeats the set until this many seconds have passed", DefaultValueFactory = _ => 1.5 };
        var auditSizes = new Option<string?>("--audit-sizes")
        {
            Description = "Instead: whole audits (intake to report) of these set sizes, comma-separated (e.g. 400,4000), each against --torch on the same photos",
        };
        var cmd = new Command("bench", "Throughput and memory of the activation pass against raw inference, measured in one run")
        {
            model, images, batch, threads, decodeThreads, spinning, size, json, factor, rounds, torch, work, minSeconds, auditSizes,
        };
        cmd.SetAction((parse, ct) =>
        {
            int n = parse.GetValue(images);
            if (n <= 0) throw new AuditInputException("--images", $"{n} is not a positive number of images");
            var (w, h) = InspectCommand.ParseSize(parse.GetValue(size) ?? "500x375");
            var path = parse.GetValue(model) ?? (File.Exists(DefaultModel) ? DefaultModel : DemoModel);
            if (!File.Exists(path)) throw new AuditInputException(path, "model file not found");
            bool asJson = parse.GetValue(json);
            if (parse.GetValue(auditSizes) is { } sizes)
            {
                var audits = new AuditBenchOptions(path, ParseSizes(sizes), parse.GetValue(batch), parse.GetValue(threads), w ?? 500, h ?? 375,
                    parse.GetValue(torch), parse.GetValue(work)) { CommandLine = ThisCommandLine() };
                var report = AuditBench.Run(audits, line => Console.Error.WriteLine(line), ct);
                Console.Out.Write(ToText(report));
                if (asJson) Console.Out.WriteLine(ToJson(report));
                return Task.FromResult(ExitCodes.Pass);
            }
            var options = new BenchOptions(path, n, parse.GetValue(batch), parse.GetValue(threads), w ?? 500, h ?? 375,
                Math.Max(1, parse.GetValue(factor)), Math.Max(1, parse.GetValue(rounds)), TorchScript: parse.GetValue(torch),
                DecodeThreads: parse.GetValue(decodeThreads), Spinning: parse.GetValue(spinning), WorkDirectory: parse.GetValue(work),
                MinPhaseSeconds: Math.Max(0, parse.GetValue(minSeconds)));
            var result = ThroughputBench.Run(options, line => Console.Error.WriteLine(line), ct);
            Console.Out.Write(ToText(result));
            if (asJson) Console.Out.WriteLine(ToJson(result));
            return Task.FromResult(ExitCodes.Pass);
        });
        return cmd;
    }

    internal static string ToText(BenchResult r)
    {
        var w = new StringWriter(CultureInfo.InvariantCulture);
        w.WriteLine($"machine      {r.Machine} (load {r.LoadAverage:0.00} at the end)");
        w.WriteLine($"model        {r.Model}: {r.Units} units, batch {r.BatchSize} ({r.BatchMode}), {r.InferenceThreads} inference / {r.DecodeThreads} decode threads");
        w.WriteLine($"images       N = {r.Images}, photos {r.PhotoSize}");
        w.WriteLine($"rates        medians of {r.Rounds} rounds; ratios are medians of per-round ratios; CPU ms per image in brackets");
        w.WriteLine($"raw          {r.Raw.ImagesPerSecond,8:0.0} images/s  [{r.Raw.CpuMsPerImage:0.00}]  ({r.RawSource})");
        w.WriteLine($"pass         {r.Pass.ImagesPerSecond,8:0.0} images/s  [{r.Pass.CpuMsPerImage:0.00}]  pass/raw  {r.PassRatio:0.000}");
        w.WriteLine($"whole        {r.Whole.ImagesPerSecond,8:0.0} images/s  [{r.Whole.CpuMsPerImage:0.00}]  whole/raw {r.WholeRatio:0.000}");
        w.WriteLine($"decode only  {r.Decode.ImagesPerSecond,8:0.0} images/s  [{r.Decode.CpuMsPerImage:0.00}]");
        w.WriteLine($"shared bound {r.SharedBound,8:0.0} images/s  whole/bound {r.WholeVsBound:0.000}  (1 / (1/decode + 1/raw))");
        if (r.TorchImagesPerSecond is { } t) w.WriteLine($"eager script {t,8:0.0} images/s  whole/script {r.WholeVsTorch:0.00}");
        else if (r.TorchNote is not null) w.WriteLine($"eager script not run: {r.TorchNote}");
        w.WriteLine($"memory       peak {Mb(r.PeakBytesAtN)} at N (first run), {Mb(r.PeakBytesAtFactorN)} at {r.FactorImages}, {Mb(r.PeakBytesAtNAfter)} at N again: " +
            $"{r.MemoryGrowth * 100:+0.0;-0.0}% against N again ({r.MemoryGrowthFromFirst * 100:+0.0;-0.0}% against the first); {r.WholeAtFactorN.ImagesPerSecond:0.0} images/s at {r.FactorImages}");
        w.WriteLine($"resident     after repeated passes: {string.Join(", ", r.ResidentAfterRuns.Select(Mb))}");
        w.WriteLine($"per image    {r.ProbabilityBytesPerImage} bytes of probabilities, prediction and flag");
        return w.ToString();
    }

    /// <summary>Most set sizes one run takes, and the largest size: a bench, not a scale run.</summary>
    internal const int MaxAuditSizes = 6, MaxAuditImages = 50_000;

    internal static IReadOnlyList<int> ParseSizes(string text)
    {
        var parts = text.Split(',', StringSplitOptions.TrimEntries | StringSplitOptions.RemoveEmptyEntries);
        if (parts.Length is 0 or > MaxAuditSizes) throw new AuditInputException("--audit-sizes", $"give 1 to {MaxAuditSizes} set sizes, comma-separated");
        var sizes = new List<int>();
        foreach (var p in parts)
        {
            if (!int.TryParse(p, NumberStyles.None, CultureInfo.InvariantCulture, out int n) || n is < 1 or > MaxAuditImages)
                throw new AuditInputException("--audit-sizes", $"'{p}' is not a set size from 1 to {MaxAuditImages}");
            sizes.Add(n);
        }
        return sizes;
    }

    // How this program was started: `dotnet auditsvc.dll` or its own launcher.
    private static IReadOnlyList<string>? ThisCommandLine()
    {
        string? host = Environment.ProcessPath, dll = typeof(BenchCommand).Assembly.Location;
        if (host is null || dll.Length == 0) return null;
        return Path.GetFileNameWithoutExtension(host) == "dotnet" ? [host, dll] : [host];
    }

    internal static string ToText(AuditBenchResult r)
    {
        var w = new StringWriter(CultureInfo.InvariantCulture);
        w.WriteLine($"machine      {r.Machine}");
        w.WriteLine($"model        {r.Model}: batch {r.BatchSize}, {r.InferenceThreads} inference / {r.DecodeThreads} decode threads, photos {r.PhotoSize}");
        w.WriteLine("whole audit  model intake to report.html and audit.json; eager script: its timed loop (and its whole process)");
        foreach (var row in r.Rows)
        {
            var p = row.Phases;
            w.WriteLine($"N = {row.Images,-7} audit {row.AuditSeconds,7:0.0} s ({row.AuditImagesPerSecond:0.0} images/s; intake {p.Intake ?? 0:0.0}, pass {p.Pass:0.0}, " +
                $"analysis {p.Analysis:0.0}, interventions {p.Interventions:0.0}, report {p.Report ?? 0:0.0}; {row.Scored} scored, {row.Findings} findings; JIT {row.JitSeconds:0.00} s; load {row.LoadBefore:0.0} to {row.LoadAfter:0.0})");
            if (row.AuditProcessSeconds is { } cold)
                w.WriteLine($"             audit  {cold,6:0.0} s as a process of its own (`auditsvc audit`, start to exit)");
            if (row.ScriptLoopSeconds is { } loop)
            {
                w.WriteLine($"             script {loop,6:0.0} s ({row.ScriptProcessSeconds:0.0} s as a process)  audit/script {row.VsScriptLoop:0.00} ({row.VsScriptProcess:0.00} against the process)");
                if (row.ProcessVsScriptProcess is { } pp) w.WriteLine($"             process against process {pp:0.00}");
            }
            else if (row.ScriptNote is not null) w.WriteLine($"             eager script not run: {row.ScriptNote}");
        }
        return w.ToString();
    }

    internal static string ToJson(AuditBenchResult r) => JsonSerializer.Serialize(new Dictionary<string, object?>
    {
        ["model"] = r.Model, ["machine"] = r.Machine, ["batch_size"] = r.BatchSize, ["inference_threads"] = r.InferenceThreads,
        ["decode_threads"] = r.DecodeThreads, ["photo_size"] = r.PhotoSize,
        ["audits"] = r.Rows.Select(row => new Dictionary<string, object?>
        {
            ["images"] = row.Images, ["audit_seconds"] = Round(row.AuditSeconds), ["intake_seconds"] = row.Phases.Intake is { } i ? Round(i) : null,
            ["pass_seconds"] = Round(row.Phases.Pass), ["analysis_seconds"] = Round(row.Phases.Analysis),
            ["interventions_seconds"] = Round(row.Phases.Interventions), ["report_seconds"] = row.Phases.Report is { } rep ? Round(rep) : null,
            ["scored"] = row.Scored, ["findings"] = row.Findings, ["jit_seconds"] = Round(row.JitSeconds), ["jit_methods"] = row.JitMethods,
            ["script_loop_seconds"] = row.ScriptLoopSeconds is { } l ? Round(l) : null, ["script_process_seconds"] = row.ScriptProcessSeconds is { } ps ? Round(ps) : null,
            ["audit_vs_script"] = row.VsScriptLoop is { } v ? Round(v) : null, ["audit_vs_script_process"] = row.VsScriptProcess is { } vp ? Round(vp) : null,
            ["audit_process_seconds"] = row.AuditProcessSeconds is { } ap ? Round(ap) : null,
            ["audit_process_vs_script_process"] = row.ProcessVsScriptProcess is { } pvp ? Round(pvp) : null,
            ["load_before"] = Round(row.LoadBefore), ["load_after"] = Round(row.LoadAfter),
        }).ToList(),
    });

    private static string Mb(long bytes) => string.Create(CultureInfo.InvariantCulture, $"{bytes / 1048576.0:0} MB");

    internal static string ToJson(BenchResult r) => JsonSerializer.Serialize(new Dictionary<string, object?>
    {
        ["model"] = r.Model, ["machine"] = r.Machine, ["cores"] = r.Cores, ["images"] = r.Images, ["batch_size"] = r.BatchSize,
        ["inference_threads"] = r.InferenceThreads, ["decode_threads"] = r.DecodeThreads, ["batch_mode"] = r.BatchMode, ["units"] = r.Units,
        ["photo_size"] = r.PhotoSize, ["raw_source"] = r.RawSource,
        ["rounds"] = r.Rounds, ["raw_cpu_ms"] = Round(r.Raw.CpuMsPerImage), ["pass_cpu_ms"] = Round(r.Pass.CpuMsPerImage),
        ["whole_cpu_ms"] = Round(r.Whole.CpuMsPerImage), ["decode_cpu_ms"] = Round(r.Decode.CpuMsPerImage),
        ["raw_ips"] = Round(r.Raw.ImagesPerSecond), ["pass_ips"] = Round(r.Pass.ImagesPerSecond), ["whole_ips"] = Round(r.Whole.ImagesPerSecond),
        ["decode_ips"] = Round(r.Decode.ImagesPerSecond), ["shared_bound_ips"] = Round(r.SharedBound),
        ["pass_ratio"] = Round(r.PassRatio), ["whole_ratio"] = Round(r.WholeRatio), ["whole_vs_bound"] = Round(r.WholeVsBound),
        ["torch_ips"] = r.TorchImagesPerSecond is { } t ? Round(t) : null, ["whole_vs_torch"] = r.WholeVsTorch is { } v ? Round(v) : null,
        ["peak_bytes_n"] = r.PeakBytesAtN, ["peak_bytes_factor_n"] = r.PeakBytesAtFactorN, ["factor_images"] = r.FactorImages,
        ["peak_bytes_n_after"] = r.PeakBytesAtNAfter, ["memory_growth"] = Round(r.MemoryGrowth), ["memory_growth_from_first"] = Round(r.MemoryGrowthFromFirst), ["resident_after_runs"] = r.ResidentAfterRuns,
        ["probability_bytes_per_image"] = r.ProbabilityBytesPerImage, ["load_average"] = Round(r.LoadAverage),
    });

    private static double? Round(double v) => double.IsFinite(v) ? Math.Round(v, 3) : null;
}
