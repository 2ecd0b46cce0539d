namespace AuditSvc.Core.Audits;

/// <summary>Behavioural measures of one cue (attribute value) from the intervention pass.</summary>
public sealed record CueIntervention(int Attribute, int Value, int CueClass, Measure? Occlusion, Measure? Transplant, int Runs);
