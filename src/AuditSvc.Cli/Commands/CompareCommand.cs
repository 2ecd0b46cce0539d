using System.CommandLine;
using System.Globalization;
using System.Text.Json;
using AuditSvc.Core;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Gate;

namespace AuditSvc.Cli.Commands;

/// <summary>`compare OLD.json NEW.json`: what changed between two audits, for a release note. Exit 0 pass, 1 block.</summary>
internal static class CompareCommand
{
    public static Command Create()
    {
        var before = new Argument<FileInfo>("old") { Description = "The earlier audit.json" };
        var after = new Argument<FileInfo>("new") { Description = "The newer audit.json" };
        var policy = new Option<FileInfo?>("--policy") { Description = "Policy file; max_leakage_rise blocks on a rise of leakage" };
        var json = new Option<bool>("--json") { Description = "Print the comparison as JSON" };
        var cmd = new Command("compare", "Compare two audits: leakage that rose, cues and findings that appeared or vanished. Exit 0 pass, 1 block.")
        {
            before, after, policy, json,
        };
        cmd.SetAction(parse =>
        {
            var pol = parse.GetValue(policy) is { } pf ? PolicyFile.Load(pf.FullName) : new AuditPolicy();
            var c = AuditComparer.Compare(Load(parse.GetValue(before)!), Load(parse.GetValue(after)!), pol);
            if (parse.GetValue(json)) Console.WriteLine(JsonSerializer.Serialize(c, AuditJson.Options));
            else Print(c);
            return c.Verdict == Verdicts.Pass ? ExitCodes.Pass : ExitCodes.Block;
        });
        return cmd;
    }

    private static AuditResult Load(FileInfo f)
    {
        if (!f.Exists) throw new AuditInputException(f.FullName, "no such file");
        try
        {
            return AuditJson.Deserialize(File.ReadAllText(f.FullName));
        }
        catch (AuditInputException e)
        {
            throw new AuditInputException(f.FullName, e.Message, e);
        }
    }

    private static void Print(AuditComparison c)
    {
        var inv = CultureInfo.InvariantCulture;
        Console.WriteLine($"verdict: {c.Verdict} (before: {c.VerdictBefore}, now: {c.VerdictAfter})");
        foreach (var r in c.Reasons) Console.WriteLine($"  reason: {r.Message}");
        Console.WriteLine("leakage by attribute (change, before → now):");
        foreach (var l in c.Leakage)
            Console.WriteLine(string.Create(inv, $"  {l.Attribute,-18} {(l.Change >= 0 ? "+" : "")}{l.Change:0.000}   {Fmt(l.Before)} → {Fmt(l.After)}   {l.VerdictBefore} → {l.VerdictAfter}"));
        foreach (var q in c.NewCues) Console.WriteLine($"new cue: {q.Attribute}={q.Value} ({q.UnitsAfter} units)");
        foreach (var q in c.VanishedCues) Console.WriteLine($"vanished cue: {q.Attribute}={q.Value} (was {q.UnitsBefore} units)");
        if (!c.SameLayers) Console.WriteLine("single findings not compared: the two models read different layers");
        else Console.WriteLine($"findings: {c.NewFindings.Count} new, {c.VanishedFindings.Count} vanished");

        static string Fmt(double? v) => v is { } x ? x.ToString("0.000", CultureInfo.InvariantCulture) : "n/a";
    }
}
