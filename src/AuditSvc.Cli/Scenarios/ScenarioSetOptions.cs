using AuditSvc.Cli.Demo;
using AuditSvc.Core;

namespace AuditSvc.Cli.Scenarios;

/// <summary>Options of one invented scenario set.</summary>
/// <param name="Scenario">Which catalogue entry.</param>
/// <param name="Count">Number of images.</param>
/// <param name="CueAgreement">
/// A: P(cue | cue class) = A and P(cue | each other class) = (1 − A)/(K − 1); A = 1/K makes the cue independent of
/// the label.
/// </param>
/// <param name="Seed">Random seed; image i depends only on (seed, i), not on the count.</param>
/// <param name="CueMode">Counterfactual override of the cue (default: as drawn).</param>
/// <param name="Bare">Write only the image and label columns.</param>
public sealed record ScenarioSetOptions(
    Scenario Scenario,
    int Count,
    double CueAgreement,
    int Seed,
    CueOverride CueMode = CueOverride.Auto,
    bool Bare = false)
{
    /// <summary>Throws <see cref="AuditInputException"/> naming the bad option.</summary>
    public void Validate()
    {
        if (Count < 1 || Count > 99_999)
            throw new AuditInputException("--count", $"must be between 1 and 99999, got {Count}");
        if (double.IsNaN(CueAgreement) || CueAgreement < 0 || CueAgreement > 1)
            throw new AuditInputException("--cue-agreement", $"must be between 0 and 1, got {CueAgreement}");
    }
}
