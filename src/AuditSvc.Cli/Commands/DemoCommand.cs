using System.CommandLine;
using AuditSvc.Cli.Demo;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.Models;
using AuditSvc.Core;
using AuditSvc.Core.Gate;

namespace AuditSvc.Cli.Commands;

/// <summary>
/// `demo`: makes the invented demo image set, audits the bundled cue-trained demo model (or the control model),
/// writes audit.json and report.html, prints the verdict and where the report is. Needs no trainer.
/// </summary>
public static class DemoCommand
{
    public const int DefaultCount = 3000;

    /// <summary>Cues follow the label in 85% of the demo audit set: strong, yet with counter-examples to test on.</summary>
    public const double DemoAgreement = 0.85;

    public const int DemoSeed = 20261202;

    internal static Command Create()
    {
        var output = new Option<DirectoryInfo>("--out") { Description = "Folder for the demo set, audit.json and report.html", DefaultValueFactory = _ => new DirectoryInfo("demo-out") }.MustNotBeAFile();
        var count = new Option<int>("--count") { Description = "Images in the demo set", DefaultValueFactory = _ => DefaultCount };
        var control = new Option<bool>("--control") { Description = "Audit the control model (trained where the cues do not follow the label) instead" };
        var cmd = new Command("demo", "Make the invented demo image set, audit the bundled demo model, write the report and print the verdict")
        {
            output, count, control,
        };
        cmd.SetAction((parse, ct) =>
        {
            var dir = parse.GetValue(output)!.FullName;
            var modelName = parse.GetValue(control) ? "fruit-control.onnx" : "fruit-cue.onnx";
            var model = FindModel(modelName);
            var setDir = Path.Combine(dir, "set");
            Console.Error.WriteLine($"[demo] writing the invented demo set ({parse.GetValue(count)} images) to {setDir}");
            var manifest = DemoSetGenerator.Write(setDir, new DemoSetOptions(parse.GetValue(count), DemoAgreement, DemoSeed));
            Console.Error.WriteLine($"[demo] auditing {model}");
            var policy = new AuditPolicy { AllowedAttributes = ["defect_area"] };
            var request = new AuditRequest(model, manifest, new ModelLoadOptions(), policy, new PassOptions(), Path.Combine(dir, ".work"));
            return Task.FromResult(AuditRunner.RunAndWrite(request, dir, ct));
        });
        return cmd;
    }

    /// <summary>The demo models ship beside the binary (demo-models/), or in seed-demo/models of a source tree.</summary>
    public static string FindModel(string name)
    {
        var beside = Path.Combine(AppContext.BaseDirectory, "demo-models", name);
        if (File.Exists(beside)) return beside;
        for (var d = new DirectoryInfo(Directory.GetCurrentDirectory()); d is not null; d = d.Parent)
        {
            var candidate = Path.Combine(d.FullName, "seed-demo", "models", name);
            if (File.Exists(candidate)) return candidate;
        }
        throw new AuditInputException(name, "demo model not found beside the program (demo-models/) nor in seed-demo/models");
    }
}
