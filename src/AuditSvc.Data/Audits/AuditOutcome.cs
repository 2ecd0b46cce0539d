namespace AuditSvc.Data.Audits;

/// <summary>What the merge and analysis produced, in the shape the tables keep it.</summary>
public sealed record AuditOutcome(string ResultJson, string Verdict, IReadOnlyList<FindingRow> Findings, IReadOnlyList<AttributeScoreRow> Scores);

public sealed record FindingRow(int Ordinal, string Layer, int Unit, string Attribute, string Value,
    double? OddsRatio, double? QValue, string? Region, string DetailJson);

public sealed record AttributeScoreRow(string Attribute, double Leakage, string Verdict, string MeasuresJson);
