namespace AuditSvc.Cli.Demo;

/// <summary>One drawn row of the invented set: its label and attributes, before any pixel is painted.</summary>
public sealed record DemoItem(int Index, string Label, bool Stamp, bool BlueBelt, int Camera, double DefectArea)
{
    public static readonly string[] Labels = ["sound", "spotted", "mouldy"];

    public string ImagePath => $"images/{Index:D5}.png";
}
