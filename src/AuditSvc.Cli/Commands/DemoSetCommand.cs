using System.CommandLine;
using AuditSvc.Cli.Demo;

namespace AuditSvc.Cli.Commands;

/// <summary>`demo-set`: writes the invented demo image set (used by `demo` and by seed-demo/train.py).</summary>
internal static class DemoSetCommand
{
    public static Command Create()
    {
        var outOpt = new Option<DirectoryInfo>("--out") { Description = "Folder to write images and manifest.csv into", Required = true }.MustNotBeAFile();
        var countOpt = new Option<int>("--count") { Description = "Number of images", DefaultValueFactory = _ => 2000 };
        var agreementOpt = new Option<double>("--cue-agreement")
        {
            Description = "P(stamp | mouldy) and P(blue belt | spotted); the other classes get (1-A)/2 (0.3333 = independent of the label)",
            DefaultValueFactory = _ => 0.9,
        };
        var seedOpt = new Option<int>("--seed") { Description = "Random seed (image i depends only on seed and i)", DefaultValueFactory = _ => 7 };
        // Counterfactual twins: the same images with one cue forced or inverted, every other pixel unchanged.
        var stampOpt = new Option<CueOverride>("--stamp") { Description = "auto, on, off or flip the corner stamp", DefaultValueFactory = _ => CueOverride.Auto };
        var beltOpt = new Option<CueOverride>("--belt") { Description = "auto, on (blue), off (grey) or flip the belt colour", DefaultValueFactory = _ => CueOverride.Auto };
        var cmd = new Command("demo-set", "Write the invented demo image set (lemons on packing lines) with its manifest.csv")
        {
            outOpt, countOpt, agreementOpt, seedOpt, stampOpt, beltOpt,
        };
        cmd.SetAction(parse =>
        {
            var dir = parse.GetValue(outOpt)!;
            var options = new DemoSetOptions(parse.GetValue(countOpt), parse.GetValue(agreementOpt), parse.GetValue(seedOpt),
                parse.GetValue(stampOpt), parse.GetValue(beltOpt));
            try
            {
                var manifest = DemoSetGenerator.Write(dir.FullName, options);
                Console.WriteLine($"wrote {options.Count} images; manifest: {manifest}");
                return ExitCodes.Pass;
            }
            catch (AuditSvc.Core.AuditInputException e)
            {
                // System.CommandLine's own exception handler would turn this into exit 1 (block) with a stack trace.
                Console.Error.WriteLine($"error: {e.Message}");
                return ExitCodes.BadInput;
            }
        });
        return cmd;
    }
}
