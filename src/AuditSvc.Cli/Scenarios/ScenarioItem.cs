namespace AuditSvc.Cli.Scenarios;

/// <summary>One drawn row of an invented scenario set: label, cue and innocent attributes, before any pixel is painted.</summary>
public sealed record ScenarioItem(int Index, int LabelIndex, string Label, bool Cue, int Shift, int Kiln)
{
    public string ImagePath => $"images/{Index:D5}.png";

    /// <summary>The shift column: which of three work shifts fired the tile; independent of the label.</summary>
    public string ShiftName => $"shift{Shift + 1}";

    /// <summary>The kiln column: which of two kilns; independent of the label and never painted.</summary>
    public string KilnName => $"kiln{Kiln + 1}";
}
