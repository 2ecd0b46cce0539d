namespace AuditSvc.Cli.Demo;

/// <summary>Options of the invented demo set.</summary>
public sealed record DemoSetOptions(int Count, double CueAgreement, int Seed);

/// <summary>Writes the invented demo image set. (Placeholder: filled in by the demo work.)</summary>
public static class DemoSetGenerator
{
    /// <summary>Writes images and manifest.csv into <paramref name="outDir"/>; returns the manifest path.</summary>
    public static string Write(string outDir, DemoSetOptions options) => throw new NotImplementedException();
}
