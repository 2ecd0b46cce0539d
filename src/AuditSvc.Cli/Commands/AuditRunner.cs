using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Reporting;

namespace AuditSvc.Cli.Commands;

/// <summary>Runs an audit with a progress line on stderr, writes audit.json and report.html, returns the exit status.</summary>
internal static class AuditRunner
{
    public static int RunAndWrite(AuditRequest request, string outDir, CancellationToken ct)
    {
        Directory.CreateDirectory(outDir);
        try
        {
            bool tty = !Console.IsErrorRedirected;
            var progress = new Progress(tty);
            var clock = new PhaseClock();
            var run = AuditPipeline.Run(request, progress, clock.Wrap(progress.Stage), ct);
            progress.End();
            var json = Path.Combine(outDir, "audit.json");
            var html = Path.Combine(outDir, "report.html");
            var drawing = System.Diagnostics.Stopwatch.StartNew();
            var report = ExemplarImagesFor(run).RenderReport(run.Result);
            // audit.json carries the report's time too (the report shows the phases before it).
            var result = run.Result with { Phases = clock.Times(clock.Seconds(AuditStage.Intake), drawing.Elapsed.TotalSeconds) };
            WriteWhole(outDir, (html, report), (json, AuditJson.Serialize(result) + "\n"));
            MemoryTrace.Mark("report written");
            PrintSummary(result, json, html);
            return result.Verdict == "pass" ? ExitCodes.Pass : ExitCodes.Block;
        }
        finally
        {
            TryDelete(request.WorkDirectory);
        }
    }

    /// <summary>
    /// Writes every file to a partial name beside it, then renames them all into place: a full disk or a kill
    /// leaves no half-written audit.json or report.html (a gate must never read a truncated verdict), and the
    /// partial files of a failed write are removed.
    /// </summary>
    internal static void WriteWhole(string outDir, params (string Path, string Text)[] files)
    {
        var partial = files.Select(f => System.IO.Path.Combine(outDir, "." + System.IO.Path.GetFileName(f.Path) + ".partial")).ToArray();
        try
        {
            for (int i = 0; i < files.Length; i++)
            {
                // Streamed, not File.WriteAllText: its preallocation reports a full disk without the errno (ENOSPC)
                // that tells it apart from a bug.
                using var stream = new FileStream(partial[i], FileMode.Create, FileAccess.Write, FileShare.None);
                using var writer = new StreamWriter(stream, new System.Text.UTF8Encoding(false));
                writer.Write(files[i].Text);
            }
            for (int i = 0; i < files.Length; i++) File.Move(partial[i], files[i].Path, overwrite: true);
        }
        catch
        {
            foreach (var p in partial)
            {
                try { File.Delete(p); } catch (IOException) { } catch (UnauthorizedAccessException) { }
            }
            throw;
        }
    }

    private static Compute.Reporting.ExemplarImages ExemplarImagesFor(AuditRun run) =>
        new Compute.Reporting.ExemplarImages(item => run.Table.Items[item].Path, run.Plan.Recipe);

    public static void PrintSummary(AuditResult r, string json, string html)
    {
        Console.WriteLine($"verdict: {r.Verdict}");
        foreach (var reason in r.Reasons) Console.WriteLine($"  reason: {reason.Message}");
        Console.WriteLine($"images: {r.Pass.Scored} of {r.ImageSet.RowsRead} rows audited ({r.ImageSet.RowsRead - r.ImageSet.RowsUsed} rows rejected at intake, {r.Pass.Problems.Count} failed in the activation run), {r.Pass.ImagesPerSecond:0} images/s");
        foreach (var p in r.ImageSet.Problems.Where(p => p.Row is null)) Console.WriteLine($"  note: {p.Reason}");
        if (r.ImageSet.Problems.Count(p => p.Reason == Compute.ImageSets.PathContainment.Refused) is > 0 and var refused)
            Console.WriteLine($"  note: {refused} rows lead outside the manifest's folder; to read images elsewhere, name their folder with --images-root DIR");
        foreach (var a in r.Attributes.OrderByDescending(a => a.Leakage ?? -1))
            Console.WriteLine($"  {a.Name,-16} leakage {(a.Leakage is { } l ? l.ToString("0.000", System.Globalization.CultureInfo.InvariantCulture) : "  n/a")}  {a.Verdict,-10} findings {a.Findings}{(a.Note is null ? "" : "  (" + a.Note + ")")}");
        var inferred = r.Candidates.Where(c => c.Attribute is not null).Select(c => c.Attribute!).ToList();
        Console.WriteLine($"findings: {r.Findings.Count} units in {r.CueGroups.Count} cue groups; fixed-place patterns: {r.Candidates.Count}, measured as place cues: {(inferred.Count == 0 ? "none" : string.Join(", ", inferred))}");
        if (r.Phases is { } t)
            Console.WriteLine(string.Create(System.Globalization.CultureInfo.InvariantCulture,
                $"time: intake {t.Intake ?? 0:0.0} s, activation run {t.Pass:0.0} s, analysis {t.Analysis:0.0} s, interventions {t.Interventions:0.0} s, report {t.Report ?? 0:0.0} s"));
        Console.WriteLine($"audit.json: {json}");
        Console.WriteLine($"report:     {html}");
    }

    private static void TryDelete(string dir)
    {
        try { if (Directory.Exists(dir)) Directory.Delete(dir, recursive: true); } catch (IOException) { } catch (UnauthorizedAccessException) { }
    }

    private sealed class Progress(bool tty) : IProgress<PassProgress>
    {
        private DateTime _last = DateTime.MinValue;
        private readonly System.Diagnostics.Stopwatch _phase = new();
        private AuditStage? _current;

        public void Stage(AuditStage stage, string what)
        {
            End();
            // Each line says how long the phase before it took, so a user sees where the time goes as it goes.
            var took = _current is { } c ? string.Create(System.Globalization.CultureInfo.InvariantCulture, $" ({Name(c)} took {_phase.Elapsed.TotalSeconds:0.0} s)") : "";
            Console.Error.WriteLine($"[{Name(stage)}] {what}{took}");
            _current = stage;
            _phase.Restart();
        }

        private static string Name(AuditStage s) => s == AuditStage.Pass ? "activation run" : s.ToString().ToLowerInvariant();

        public void Report(PassProgress p)
        {
            if (DateTime.UtcNow - _last < TimeSpan.FromSeconds(tty ? 0.2 : 5) && p.Done < p.Total) return;
            _last = DateTime.UtcNow;
            double eta = p.ImagesPerSecond > 0 ? (p.Total - p.Done) / p.ImagesPerSecond : 0;
            var line = $"  {p.Done}/{p.Total} images, {p.ImagesPerSecond:0} images/s, {eta:0}s left";
            if (tty) Console.Error.Write("\r" + line.PadRight(60)); else Console.Error.WriteLine(line);
        }

        public void End()
        {
            if (tty && _last != DateTime.MinValue) Console.Error.WriteLine();
            _last = DateTime.MinValue;
        }
    }
}
