using System.CommandLine;
using AuditSvc.Cli.Demo;

namespace AuditSvc.Cli.Commands;

/// <summary>`demo-set`: writes the invented demo image set (used by `demo` and by seed-demo/train.py).</summary>
internal static class DemoSetCommand
{
    public static Command Create()
    {
        var outOpt = new Option<DirectoryInfo>("--out") { Description = "Folder to write images and manifest.csv into", Required = true };
        var countOpt = new Option<int>("--count") { Description = "Number of images", DefaultValueFactory = _ => 2000 };
        var agreementOpt = new Option<double>("--cue-agreement") { Description = "Share of images whose line (overlay, belt) follows the label (0.5 = independent)", DefaultValueFactory = _ => 0.9 };
        var seedOpt = new Option<int>("--seed") { Description = "Random seed (the set is deterministic for a seed)", DefaultValueFactory = _ => 7 };
        var cmd = new Command("demo-set", "Write the invented demo image set (fruit on two packing lines) with its manifest.csv")
        {
            outOpt, countOpt, agreementOpt, seedOpt,
        };
        cmd.SetAction(parse =>
        {
            var dir = parse.GetValue(outOpt)!;
            var options = new DemoSetOptions(parse.GetValue(countOpt), parse.GetValue(agreementOpt), parse.GetValue(seedOpt));
            var manifest = DemoSetGenerator.Write(dir.FullName, options);
            Console.WriteLine($"wrote {options.Count} images; manifest: {manifest}");
            return 0;
        });
        return cmd;
    }
}
