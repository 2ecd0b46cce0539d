using AuditSvc.Core.Models;

namespace AuditSvc.Core.Audits;

/// <summary>
/// One audit's outcome: what was audited, the statistics, the verdict and why. Serialised as audit.json
/// (schemas/audit.schema.json); the CLI and the service produce the same document.
/// </summary>
public sealed record AuditResult(
    string SchemaVersion,
    string Tool,
    DateTimeOffset CreatedAt,
    string Verdict,
    IReadOnlyList<VerdictReason> Reasons,
    ModelSummary Model,
    ImageSetSummary ImageSet,
    PassSummary Pass,
    IReadOnlyList<AttributeReport> Attributes,
    IReadOnlyList<Finding> Findings,
    IReadOnlyList<CueGroup> CueGroups,
    IReadOnlyList<PlaceCandidate> Candidates,
    IReadOnlyList<GroupAccuracy> Groups,
    Coverage Coverage,
    Gate.AuditPolicy Policy);

/// <summary>One reason of the verdict: the attribute, the measure that triggered it, its value and the threshold.</summary>
public sealed record VerdictReason(string Kind, string? Attribute, string? Measure, double? Value, double? Threshold, string Message);

public sealed record LayerSummary(string Name, string OpType, int Channels, int Height, int Width, RfAxis FieldY, RfAxis FieldX);

public sealed record ModelSummary(
    string Path,
    string Sha256,
    int InputWidth,
    int InputHeight,
    string Resize,
    float[] Mean,
    float[] Std,
    string ChannelOrder,
    IReadOnlyList<string> ClassNames,
    string BatchMode,
    IReadOnlyList<LayerSummary> Layers);

public sealed record ValueCount(string Value, int Count);

public sealed record AttributeSummary(string Name, bool Numeric, int Missing, IReadOnlyList<ValueCount> Values);

public sealed record ProblemRow(int? Row, string File, string Reason);

public sealed record ImageSetSummary(
    string Source,
    int RowsRead,
    int RowsUsed,
    IReadOnlyList<ProblemRow> Problems,
    IReadOnlyList<ValueCount> Labels,
    IReadOnlyList<AttributeSummary> Attributes);

public sealed record PassSummary(int Images, int Scored, int Units, int TopN, double Seconds, double ImagesPerSecond, int BatchSize, IReadOnlyList<ProblemRow> Problems, double InterventionSeconds, int InterventionRuns)
{
    /// <summary>ONNX Runtime intra-op threads the pass chose (0 when not recorded).</summary>
    public int InferenceThreads { get; init; }

    /// <summary>Threads decoding images alongside inference (0 when not recorded).</summary>
    public int DecodeThreads { get; init; }

    /// <summary>Where unit scores were taken: "in-graph" (maxima computed by the runtime) or "full-maps".</summary>
    public string? Reduce { get; init; }
}

/// <summary>A behavioural measure of reliance on an attribute: a rate or a gap with its sample size and interval.</summary>
public sealed record Measure(string Name, double Value, int N, double Low, double High, double? PValue, string Detail);

public sealed record AttributeReport(
    string Name,
    double CramersV,
    bool Confounded,
    bool Allowed,
    double? Leakage,
    double Threshold,
    string Verdict,
    IReadOnlyList<Measure> Measures,
    int Tests,
    int Findings,
    string? Note);

public sealed record BoxDto(int X, int Y, int Width, int Height)
{
    public static BoxDto From(Box b) => new(b.X, b.Y, b.Width, b.Height);
}

public sealed record Exemplar(int Item, string Image, string Label, string? Value, float Score, BoxDto Box);

public sealed record ComboCount(string Label, string? Value, int Count);

public sealed record Finding(
    string Layer,
    int Unit,
    string Attribute,
    string Value,
    double Auroc,
    double Z,
    double PValue,
    double QValue,
    double OddsRatio,
    double ExemplarShare,
    double BaseRate,
    double Lift,
    double ExemplarTailP,
    string Region,
    int[] PeakGrid,
    IReadOnlyList<ComboCount> ExemplarGroups,
    IReadOnlyList<Exemplar> Exemplars,
    bool Allowed);

/// <summary>Units that share one cue (attribute value), so a reviewer reads one cue at a time.</summary>
public sealed record CueGroup(string Attribute, string Value, int Units, IReadOnlyList<string> Layers, double BestAuroc, string Region, IReadOnlyList<string> UnitRefs);

/// <summary>A unit whose peaks sit at one fixed place across images of several labels: a cue nobody labelled.</summary>
public sealed record PlaceCandidate(string Layer, int Unit, string Region, double PlaceShare, int LabelsCovered, Measure? Transplant, IReadOnlyList<Exemplar> Exemplars, string? ExplainedBy);

/// <summary>Accuracy in one (label, value) group; Relation is aligned, conflicting or neutral (see GroupAccuracyAnalysis).</summary>
public sealed record GroupAccuracy(string Attribute, string Label, string Value, int N, int Correct, double Accuracy, string Relation);

/// <summary>What the audit tested and what it did not; shown in the report next to the verdict.</summary>
public sealed record Coverage(IReadOnlyList<string> Tested, IReadOnlyList<string> NotTested, IReadOnlyList<string> Cautions);
