using System.Diagnostics;
using AuditSvc.Core.Audits;

namespace AuditSvc.Compute.Audits;

/// <summary>
/// Times the phases of an audit from the pipeline's stage announcements: each phase lasts from its announcement to
/// the next one. Pass it (through <see cref="Wrap"/>) where the pipeline takes its stage callback.
/// </summary>
public sealed class PhaseClock
{
    private readonly Stopwatch _clock = Stopwatch.StartNew();
    private readonly Dictionary<AuditStage, double> _seconds = [];
    private AuditStage? _current;
    private double _since;

    /// <summary>A stage callback that records the time and then calls <paramref name="inner"/>.</summary>
    public Action<AuditStage, string> Wrap(Action<AuditStage, string>? inner = null) => (stage, what) =>
    {
        Mark(stage);
        inner?.Invoke(stage, what);
    };

    /// <summary>Seconds spent in a finished (or the current) phase; 0 when it never ran.</summary>
    public double Seconds(AuditStage stage)
    {
        double s = _seconds.GetValueOrDefault(stage);
        return _current == stage ? s + _clock.Elapsed.TotalSeconds - _since : s;
    }

    /// <summary>The phases so far; <paramref name="intake"/> and <paramref name="report"/> as the host measured them.</summary>
    public PhaseTimes Times(double? intake, double? report, double? pass = null) =>
        new(intake, pass ?? Seconds(AuditStage.Pass), Seconds(AuditStage.Analysis), Seconds(AuditStage.Interventions), report);

    private void Mark(AuditStage stage)
    {
        double now = _clock.Elapsed.TotalSeconds;
        if (_current is { } c) _seconds[c] = _seconds.GetValueOrDefault(c) + now - _since;
        _current = stage == AuditStage.Done ? null : stage;
        _since = now;
    }
}
