namespace AuditSvc.Cli.Scenarios;

/// <summary>
/// The fixed table of invented scenarios the validation suite trains and audits. Each is trained twice: once
/// where the cue follows its class (the model relies on it) and once where it is independent (it ignores it).
/// Changing an entry changes what the committed models were trained on: retrain them in the same commit.
/// </summary>
public static class ScenarioCatalogue
{
    public static readonly IReadOnlyList<Scenario> All =
    [
        new("stamp-small-bottom-right", new StampCue(6, 4, StampPlace.BottomRight), 3, "pitted"),
        new("stamp-top-left", new StampCue(10, 6, StampPlace.TopLeft), 3, "crazed"),
        new("stamp-large-top-right", new StampCue(16, 8, StampPlace.TopRight), 3, "pitted"),
        new("stamp-bottom-left-4class", new StampCue(12, 6, StampPlace.BottomLeft), 4, "chipped"),
        new("stamp-top-edge", new StampCue(12, 5, StampPlace.TopCentre), 3, "sound"),
        new("stamp-bottom-edge", new StampCue(8, 4, StampPlace.BottomCentre), 3, "crazed"),
        new("border-thin-red", new BorderCue(2, 196, 44, 40), 3, "pitted"),
        new("border-wide-teal-4class", new BorderCue(4, 36, 150, 156), 4, "crazed"),
        new("cast-warm", new CastCue("warm", 1.12f, 1.0f, 0.84f, 8, 2, -8), 3, "crazed"),
        new("cast-cool", new CastCue("cool", 0.88f, 1.0f, 1.14f, -8, 0, 8), 3, "pitted"),
        new("backdrop-stripes", new BackdropCue(26, 5, 9), 3, "pitted"),
        new("backdrop-stripes-4class", new BackdropCue(20, 4, 7), 4, "sound"),
        new("source-blur", new BlurCue(1.0f), 3, "pitted"),
        new("source-jpeg", new RecompressCue(30), 3, "crazed"),
    ];

    /// <summary>The scenario of that name, or null.</summary>
    public static Scenario? Find(string name) => All.FirstOrDefault(s => s.Name == name);
}
