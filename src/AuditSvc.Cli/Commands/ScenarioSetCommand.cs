using System.CommandLine;
using System.Globalization;
using AuditSvc.Cli.Demo;
using AuditSvc.Cli.Scenarios;
using AuditSvc.Core;

namespace AuditSvc.Cli.Commands;

/// <summary>`scenario-set`: writes an image set of one invented validation scenario, or lists the catalogue.</summary>
internal static class ScenarioSetCommand
{
    public static Command Create()
    {
        var listOpt = new Option<bool>("--list") { Description = "Print the catalogue of invented scenarios and exit" };
        var scenarioOpt = new Option<string?>("--scenario") { Description = "Scenario name (see --list)" };
        var outOpt = new Option<DirectoryInfo?>("--out") { Description = "Folder to write images and manifest.csv into" }.MustNotBeAFile();
        var countOpt = new Option<int>("--count") { Description = "Number of images", DefaultValueFactory = _ => 900 };
        var agreementOpt = new Option<double>("--cue-agreement")
        {
            Description = "P(cue | cue class); each other class gets (1-A)/(K-1), so A = 1/K is independent of the label",
            DefaultValueFactory = _ => 0.9,
        };
        var seedOpt = new Option<int>("--seed") { Description = "Random seed (image i depends only on seed and i)", DefaultValueFactory = _ => 7 };
        // Counterfactual twins: the same images with the cue forced or inverted, every other pixel unchanged.
        var cueOpt = new Option<CueOverride>("--cue") { Description = "auto, on, off or flip the planted cue", DefaultValueFactory = _ => CueOverride.Auto };
        var bareOpt = new Option<bool>("--bare") { Description = "Write only the image and label columns" };
        var cmd = new Command("scenario-set", "Write an image set of an invented validation scenario (glazed tiles graded by flaw, one planted cue)")
        {
            listOpt, scenarioOpt, outOpt, countOpt, agreementOpt, seedOpt, cueOpt, bareOpt,
        };
        cmd.SetAction(parse =>
        {
            try
            {
                if (parse.GetValue(listOpt))
                {
                    PrintCatalogue();
                    return ExitCodes.Pass;
                }
                var name = parse.GetValue(scenarioOpt);
                if (string.IsNullOrWhiteSpace(name)) throw new AuditInputException("--scenario", "required (see --list)");
                var scenario = ScenarioCatalogue.Find(name)
                    ?? throw new AuditInputException("--scenario", $"unknown scenario '{name}' (see --list)");
                var dir = parse.GetValue(outOpt) ?? throw new AuditInputException("--out", "required");
                var options = new ScenarioSetOptions(scenario, parse.GetValue(countOpt), parse.GetValue(agreementOpt),
                    parse.GetValue(seedOpt), parse.GetValue(cueOpt), parse.GetValue(bareOpt));
                var manifest = ScenarioSetGenerator.Write(dir.FullName, options);
                Console.WriteLine($"wrote {options.Count} images of the invented scenario {scenario.Name}; manifest: {manifest}");
                return ExitCodes.Pass;
            }
            catch (AuditInputException e)
            {
                // System.CommandLine's own handler would turn this into exit 1 (block) with a stack trace.
                Console.Error.WriteLine($"error: {e.Message}");
                return ExitCodes.BadInput;
            }
        });
        return cmd;
    }

    private static void PrintCatalogue()
    {
        Console.WriteLine("Invented validation scenarios: glazed tiles on a kiln conveyor graded by surface flaw (no real data).");
        var rows = new List<string[]> { new[] { "name", "classes", "cue_class", "kind", "column", "present", "absent", "parameters" } };
        rows.AddRange(ScenarioCatalogue.All.Select(s => new[]
        {
            s.Name, s.Classes.ToString(CultureInfo.InvariantCulture), s.CueClass, s.Cue.Kind, s.Cue.Column, s.Cue.Present, s.Cue.Absent,
            s.Cue.Describe(),
        }));
        var widths = Enumerable.Range(0, rows[0].Length).Select(c => rows.Max(r => r[c].Length)).ToArray();
        foreach (var row in rows)
            Console.WriteLine(string.Join("  ", row.Select((cell, c) => c == row.Length - 1 ? cell : cell.PadRight(widths[c]))));
    }
}
