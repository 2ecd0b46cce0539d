using AuditSvc.Core.Analysis;

namespace AuditSvc.Core.Audits;

/// <summary>A cue to intervene on: an attribute value (a column's, or an inferred place cue's "yes") and the class it pushes toward (-1 when none).</summary>
public sealed record CueTarget(int Attribute, int Value, int CueClass);

/// <summary>The behavioural evidence of one cue from the intervention pass: where it sits, and the paired measures taken there.</summary>
/// <param name="Note">Why a measure was not taken (no local region, too few images), in one line; null when all ran.</param>
public sealed record CueEvidence(int Attribute, int Value, int CueClass, CueRegion Region, IReadOnlyList<Measure> Measures, int Runs, string? Note);
