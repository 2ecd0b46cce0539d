using System.Diagnostics;
using System.Globalization;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.Models;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;
using AuditSvc.Core.Reporting;

namespace AuditSvc.Compute.Bench;

/// <summary>What the whole-audit bench runs: the model, the set sizes, threads and batch (zero = the pass chooses).</summary>
public sealed record AuditBenchOptions(
    string ModelPath,
    IReadOnlyList<int> Sizes,
    int BatchSize = 0,
    int Threads = 0,
    int PhotoWidth = 500,
    int PhotoHeight = 375,
    string? TorchScript = null,
    string? WorkDirectory = null,
    string Python = "/usr/bin/python3")
{
    /// <summary>
    /// How to start the command line (the program and the arguments before `audit`): when given, each size is also
    /// audited by `auditsvc audit` in a process of its own, timed from start to exit, as the script's process is.
    /// </summary>
    public IReadOnlyList<string>? CommandLine { get; init; }
}

/// <summary>
/// One set size: the whole audit's seconds (model intake to report.html and audit.json written) and its phases,
/// and the eager script's seconds on the same files (its own timed loop, and its process from start to exit).
/// </summary>
public sealed record AuditBenchRow(int Images, double AuditSeconds, PhaseTimes Phases, int Scored, int Findings, double LoadBefore, double LoadAfter)
{
    public double AuditImagesPerSecond => Images / AuditSeconds;

    public double? ScriptLoopSeconds { get; init; }

    public double? ScriptProcessSeconds { get; init; }

    public string? ScriptNote { get; init; }

    /// <summary>Seconds the just-in-time compiler spent during the audit (all threads), and the methods it compiled: the
    /// part of a first audit in a process that a second one does not pay.</summary>
    public double JitSeconds { get; init; }

    public long JitMethods { get; init; }

    /// <summary>The same audit by `auditsvc audit` in a new process, start to exit (null when not run).</summary>
    public double? AuditProcessSeconds { get; init; }

    /// <summary>The script's process against the audit's process: both from start-up to results, cold.</summary>
    public double? ProcessVsScriptProcess => ScriptProcessSeconds / AuditProcessSeconds;

    /// <summary>Whole audit against the script's timed loop (decode, forward with hooks, top-n; no start-up): script seconds / audit seconds.</summary>
    public double? VsScriptLoop => ScriptLoopSeconds / AuditSeconds;

    /// <summary>Whole audit against the script's process, start-up (importing torch, building the network) included.</summary>
    public double? VsScriptProcess => ScriptProcessSeconds / AuditSeconds;
}

/// <summary>The whole-audit bench's run: the settings the pass chose and one row per set size.</summary>
public sealed record AuditBenchResult(string Model, string Machine, int BatchSize, int InferenceThreads, int DecodeThreads, string PhotoSize,
    IReadOnlyList<AuditBenchRow> Rows);

/// <summary>
/// Measures what a user waits for: `audit` from files to report (model intake, set intake with hashing, the
/// activation pass, analysis, interventions, report and audit.json), in process, on generated photos with a
/// label and an attribute column, against bench/torch_hooks.py on the same files with the same threads and batch.
/// For each size the audit runs first and the script right after it, so both meet the same load from other work.
/// </summary>
public static class AuditBench
{
    public static AuditBenchResult Run(AuditBenchOptions o, Action<string>? log, CancellationToken ct)
    {
        if (o.Sizes.Count == 0 || o.Sizes.Any(n => n <= 0)) throw new ArgumentException("every set size must be positive", nameof(o));
        var work = o.WorkDirectory ?? Path.Combine(Path.GetTempPath(), "auditsvc-auditbench-" + Guid.NewGuid().ToString("N"));
        log ??= _ => { };
        try
        {
            return Measure(o, work, log, ct);
        }
        finally
        {
            if (o.WorkDirectory is null && Directory.Exists(work)) Directory.Delete(work, recursive: true);
        }
    }

    private static AuditBenchResult Measure(AuditBenchOptions o, string work, Action<string> log, CancellationToken ct)
    {
        var probe = ModelIntake.Load(o.ModelPath);
        var classes = probe.Plan.ClassNames.Take(Math.Min(3, probe.Plan.ClassCount)).ToArray();
        // Every output named, as a user auditing a wide model on a few of its classes gives --labels: the set's
        // label list is then the model's, and a cue may push decisions toward any output.
        var load = new ModelLoadOptions(Recipe: probe.Plan.Recipe.ClassNames is null ? new RecipeOverrides(ClassNames: probe.Plan.ClassNames) : null);
        var options = new PassOptions { BatchSize = o.BatchSize, InferenceThreads = o.Threads, DecodeThreads = o.Threads };
        var chosen = options.Resolve(3 * probe.Plan.Recipe.Height * probe.Plan.Recipe.Width);
        var arch = o.TorchScript is null ? null : TorchBaseline.ArchitectureOf(o.ModelPath);
        probe = null;
        PeakMemory.Trim();

        var images = Path.Combine(work, "images");
        int most = o.Sizes.Max();
        log($"writing {most} photos of {o.PhotoWidth}x{o.PhotoHeight} to {images}");
        var files = BenchImages.Write(images, most, o.PhotoWidth, o.PhotoHeight);
        var rows = new List<AuditBenchRow>();
        foreach (int n in o.Sizes)
        {
            ct.ThrowIfCancellationRequested();
            var manifest = Manifest(images, files, n, classes);
            var outDir = Path.Combine(work, $"audit-{n}");
            double loadBefore = BenchMachine.LoadAverage();
            log($"audit of {n} images ({Path.GetFileName(o.ModelPath)}, batch {chosen.BatchSize}, {chosen.InferenceThreads} threads), load {loadBefore:0.0}");
            var jit = System.Runtime.JitInfo.GetCompilationTime();
            long jitMethods = System.Runtime.JitInfo.GetCompiledMethodCount();
            var (seconds, phases, scored, findings) = Audit(o.ModelPath, load, manifest, outDir, options, ct);
            var row = new AuditBenchRow(n, seconds, phases, scored, findings, loadBefore, BenchMachine.LoadAverage())
            {
                JitSeconds = (System.Runtime.JitInfo.GetCompilationTime() - jit).TotalSeconds,
                JitMethods = System.Runtime.JitInfo.GetCompiledMethodCount() - jitMethods,
            };
            log(string.Create(CultureInfo.InvariantCulture, $"audit of {n}: {seconds:0.0} s ({n / seconds:0.0} images/s); intake {phases.Intake ?? 0:0.0}, pass {phases.Pass:0.0}, " +
                $"analysis {phases.Analysis:0.0}, interventions {phases.Interventions:0.0}, report {phases.Report ?? 0:0.0} s; JIT {row.JitSeconds:0.00} s for {row.JitMethods} methods"));
            if (o.CommandLine is { Count: > 0 } commandLine)
            {
                row = row with { AuditProcessSeconds = AuditProcess(commandLine, o, load, manifest, Path.Combine(work, $"audit-{n}-process"), ct) };
                log(string.Create(CultureInfo.InvariantCulture, $"audit of {n} as a process: {row.AuditProcessSeconds:0.0} s"));
            }
            if (o.TorchScript is not null)
            {
                if (arch is null) row = row with { ScriptNote = "no eager-mode rebuild of this architecture" };
                else
                {
                    var clock = Stopwatch.StartNew();
                    var script = TorchBaseline.RunDetailed(o.Python, o.TorchScript, arch, images, manifest, o.PhotoWidth, o.PhotoHeight,
                        chosen.InferenceThreads, chosen.BatchSize, ct);
                    double process = clock.Elapsed.TotalSeconds;
                    row = row with
                    {
                        ScriptLoopSeconds = script.Seconds,
                        ScriptProcessSeconds = script.Seconds is null ? null : process,
                        ScriptNote = script.Note,
                    };
                    log(string.Create(CultureInfo.InvariantCulture, $"eager script on {n}: {(script.Seconds is { } s ? $"{s:0.0} s in its loop, {process:0.0} s as a process" : "not run")} ({script.Note})"));
                }
            }
            rows.Add(row);
            if (o.WorkDirectory is null && Directory.Exists(outDir)) Directory.Delete(outDir, recursive: true);
        }
        return new AuditBenchResult(Path.GetFileName(o.ModelPath), BenchMachine.Describe(withOs: false), chosen.BatchSize, chosen.InferenceThreads, chosen.DecodeThreads,
            $"{o.PhotoWidth}x{o.PhotoHeight}", rows);
    }

    /// <summary>The audit as `auditsvc audit` runs it, timed from model intake to the last file written.</summary>
    private static (double Seconds, PhaseTimes Phases, int Scored, int Findings) Audit(string model, ModelLoadOptions load, string manifest, string outDir,
        PassOptions options, CancellationToken ct)
    {
        Directory.CreateDirectory(outDir);
        var clock = Stopwatch.StartNew();
        var phases = new PhaseClock();
        var request = new AuditRequest(model, manifest, load, new AuditPolicy(), options, Path.Combine(outDir, ".work"));
        var run = AuditPipeline.Run(request, null, phases.Wrap(), ct);
        var drawing = Stopwatch.StartNew();
        var exemplars = new Reporting.ExemplarImages(item => run.Table.Items[item].Path, run.Plan.Recipe);
        File.WriteAllText(Path.Combine(outDir, "report.html"), exemplars.RenderReport(run.Result));
        var times = phases.Times(phases.Seconds(AuditStage.Intake), drawing.Elapsed.TotalSeconds);
        AuditJson.Write(Path.Combine(outDir, "audit.json"), run.Result with { Phases = times });
        if (Directory.Exists(request.WorkDirectory)) Directory.Delete(request.WorkDirectory, recursive: true);
        return (clock.Elapsed.TotalSeconds, times, run.Result.Pass.Scored, run.Result.Findings.Count);
    }

    /// <summary>`auditsvc audit` on the same manifest, batch and threads in a child process: seconds from start to exit.</summary>
    private static double AuditProcess(IReadOnlyList<string> commandLine, AuditBenchOptions o, ModelLoadOptions load, string manifest, string outDir,
        CancellationToken ct)
    {
        var start = new ProcessStartInfo(commandLine[0]) { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        foreach (var a in commandLine.Skip(1)) start.ArgumentList.Add(a);
        foreach (var a in new[] { "audit", "--model", o.ModelPath, "--data", manifest, "--out", outDir,
                     "--batch", o.BatchSize.ToString(CultureInfo.InvariantCulture), "--threads", o.Threads.ToString(CultureInfo.InvariantCulture) })
            start.ArgumentList.Add(a);
        if (load.Recipe?.ClassNames is { } names)
        {
            start.ArgumentList.Add("--labels");
            start.ArgumentList.Add(string.Join(",", names));
        }
        var clock = Stopwatch.StartNew();
        using var process = Process.Start(start) ?? throw new InvalidOperationException($"could not start {commandLine[0]}");
        var stdout = process.StandardOutput.ReadToEndAsync(ct);
        var stderr = process.StandardError.ReadToEndAsync(ct);
        process.WaitForExit();
        double seconds = clock.Elapsed.TotalSeconds;
        // 0 pass, 1 block: both are whole audits; anything else is the bench's problem to show.
        if (process.ExitCode is not (0 or 1))
            throw new InvalidOperationException($"auditsvc audit exited {process.ExitCode}: {stderr.Result.Trim()} {stdout.Result.Trim()}");
        if (Directory.Exists(outDir)) Directory.Delete(outDir, recursive: true);
        return seconds;
    }

    /// <summary>
    /// A manifest over the first <paramref name="n"/> photos: labels cycle through the model's first classes and a
    /// two-valued attribute is drawn independently of them (seeded), so the analysis has a column to test.
    /// </summary>
    internal static string Manifest(string dir, IReadOnlyList<string> files, int n, IReadOnlyList<string> classes)
    {
        var path = Path.Combine(dir, $"manifest-{n}.csv");
        var rng = new Random(n);
        var lines = new List<string>(n + 1) { "image,label,site" };
        for (int i = 0; i < n; i++)
            lines.Add($"{Path.GetFileName(files[i])},{classes[i % classes.Count]},{(rng.Next(2) == 0 ? "north" : "south")}");
        File.WriteAllLines(path, lines);
        return path;
    }
}
