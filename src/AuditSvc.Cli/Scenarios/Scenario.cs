namespace AuditSvc.Cli.Scenarios;

/// <summary>
/// One invented scenario: glazed tiles graded by surface flaw into <paramref name="Classes"/> classes, with one
/// planted cue linked to <paramref name="CueClass"/> at the set's agreement.
/// </summary>
public sealed record Scenario(string Name, Cue Cue, int Classes, string CueClass)
{
    /// <summary>Every grade the scenes know, in model output order; a scenario uses the first <see cref="Classes"/>.</summary>
    public static readonly string[] AllLabels = ["sound", "crazed", "pitted", "chipped"];

    public IReadOnlyList<string> Labels => AllLabels[..Classes];

    public int CueClassIndex => Array.IndexOf(AllLabels, CueClass);

    /// <summary>The agreement at which the cue is independent of the label: 1/K.</summary>
    public double IndependentAgreement => 1.0 / Classes;
}
