using AuditSvc.Core;

namespace AuditSvc.Cli.Demo;

/// <summary>How a counterfactual run overrides one planted cue while every other pixel stays the same.</summary>
public enum CueOverride
{
    /// <summary>Keep the value drawn for the image.</summary>
    Auto,
    /// <summary>Force the cue present (stamp=yes, belt=blue).</summary>
    On,
    /// <summary>Force the cue absent (stamp=no, belt=grey).</summary>
    Off,
    /// <summary>Invert the value drawn for the image.</summary>
    Flip,
}

/// <summary>Options of the invented demo set.</summary>
/// <param name="Count">Number of images.</param>
/// <param name="CueAgreement">
/// A: P(stamp=yes | mouldy) = A and P(stamp=yes | sound or spotted) = (1 − A)/2; likewise belt=blue with spotted.
/// A = 1/3 makes both cues independent of the label; every A keeps each cue's overall rate at 1/3.
/// </param>
/// <param name="Seed">Random seed; image i depends only on (seed, i), not on the count.</param>
/// <param name="Stamp">Counterfactual override of the stamp (default: as drawn).</param>
/// <param name="Belt">Counterfactual override of the belt colour (default: as drawn).</param>
public sealed record DemoSetOptions(
    int Count,
    double CueAgreement,
    int Seed,
    CueOverride Stamp = CueOverride.Auto,
    CueOverride Belt = CueOverride.Auto)
{
    /// <summary>The agreement at which both cues are independent of the label.</summary>
    public const double IndependentAgreement = 1.0 / 3.0;

    /// <summary>Throws <see cref="AuditInputException"/> naming the bad field.</summary>
    public void Validate()
    {
        if (Count < 1 || Count > 99_999)
            throw new AuditInputException("--count", $"must be between 1 and 99999, got {Count}");
        if (double.IsNaN(CueAgreement) || CueAgreement < 0 || CueAgreement > 1)
            throw new AuditInputException("--cue-agreement", $"must be between 0 and 1, got {CueAgreement}");
    }
}
