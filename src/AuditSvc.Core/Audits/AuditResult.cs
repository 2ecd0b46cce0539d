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
    Gate.AuditPolicy Policy)
{
    /// <summary>Where the time went, in seconds per phase; null in documents written before phases were timed.</summary>
    public PhaseTimes? Phases { get; init; }
}

/// <summary>
/// Seconds per phase of one audit. Null where a phase ran elsewhere or later: the service's intake happens at upload,
/// and its report is drawn when first asked for.
/// </summary>
public sealed record PhaseTimes(double? Intake, double Pass, double Analysis, double Interventions, double? Report);

/// <summary>One reason of the verdict: the attribute, the measure that triggered it, its value and the threshold.</summary>
public sealed record VerdictReason(string Kind, string? Attribute, string? Measure, double? Value, double? Threshold, string Message);

public sealed record LayerSummary(string Name, string OpType, int Channels, int Height, int Width, RfAxis FieldY, RfAxis FieldX)
{
    /// <summary>channels-first, channels-last, tokens or vector: how the tensor holds its units and places.</summary>
    public string Layout { get; init; } = "channels-first";

    /// <summary>What an exemplar crop of this layer shows, and when the true receptive field is larger.</summary>
    public string Place { get; init; } = "";
}

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
    IReadOnlyList<LayerSummary> Layers)
{
    /// <summary>What the intake changed or assumed about the model (channels-last input, normalisation inside the graph, one binary output).</summary>
    public IReadOnlyList<string> Notes { get; init; } = [];
}

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

/// <summary>
/// A behavioural measure of reliance on an attribute: an effect (a gap, or a treated − control rate) with its sample
/// size, 95% interval, the p-value of its test of "no effect" and, once the gate has seen every measure of the audit,
/// that p-value adjusted across them (Benjamini–Hochberg).
/// </summary>
public sealed record Measure(string Name, double Value, int N, double Low, double High, double? PValue, string Detail)
{
    /// <summary>The p-value adjusted across the audit's gating measures; null for a measure outside that family.</summary>
    public double? QValue { get; init; }

    /// <summary>False for a measure shown as description only (it can never block).</summary>
    public bool Gating { get; init; } = true;

    /// <summary>The cue an intervention was run on ("stamp=yes → mouldy"); null for the attribute-wide gap.</summary>
    public string? Cue { get; init; }

    /// <summary>An intervention's pairs whose outcome happened in the treated arm; null for the gap.</summary>
    public int? TreatedHits { get; init; }

    /// <summary>An intervention's pairs whose outcome happened in the control arm; null for the gap.</summary>
    public int? ControlHits { get; init; }
}

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
    string? Note)
{
    /// <summary>True for a place cue: an attribute the audit inferred from its units, with no column behind it.</summary>
    public bool Inferred { get; init; }

    /// <summary>The attribute's values that were intervened on: where each sits and what was (not) run.</summary>
    public IReadOnlyList<CueReport> Cues { get; init; } = [];
}

/// <summary>Where a cue sits in the input (read from the pixels) and the pixel map it was read from.</summary>
/// <param name="Kind">local (patch interventions), global (colour transfer) or none (no pixel differs).</param>
/// <param name="Share">Share of the input's pixels that differ with the value (the region adds a margin around them).</param>
/// <param name="Map">The label-stratified standardised difference, max-pooled to MapWidth × MapHeight cells, 0..100 of Peak.</param>
public sealed record RegionReport(string Kind, BoxDto? Box, double Share, double Peak, double Threshold, int ImagesWith, int ImagesWithout, int InputWidth, int InputHeight, int MapWidth, int MapHeight, int[] Map);

/// <summary>One value of an attribute that the intervention pass took up.</summary>
/// <param name="PushesToward">The class the value pushes the model's decisions toward, or null when none (any change of prediction counts).</param>
public sealed record CueReport(string Value, string? PushesToward, RegionReport Region, int Runs, string? Note);

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

/// <summary>
/// A pattern that several live units agree on at one fixed place: a cue nobody labelled. When no column explains it,
/// it became the inferred attribute <see cref="Attribute"/> (measured like any column, listed among the attributes).
/// </summary>
/// <param name="Attribute">The inferred attribute's name; null when a column explains the pattern or too few images carry it.</param>
/// <param name="Split">Score of the unit above which an image carries the pattern (Otsu's split).</param>
/// <param name="Separability">Otsu's between-class share of the variance at that split, 0..1.</param>
public sealed record PlaceCandidate(string Name, string? Attribute, string Layer, int Unit, string Region, double PlaceShare, int LabelsCovered,
    IReadOnlyList<string> UnitRefs, double Split, double Separability, int Carriers, IReadOnlyList<Exemplar> Exemplars, string? ExplainedBy)
{
    /// <summary>How many live units agree on the place (<see cref="UnitRefs"/> lists at most 20 of them).</summary>
    public int AgreeingUnits { get; init; }
}

/// <summary>Accuracy in one (label, value) group; Relation is aligned, conflicting or neutral (see GroupAccuracyAnalysis).</summary>
public sealed record GroupAccuracy(string Attribute, string Label, string Value, int N, int Correct, double Accuracy, string Relation);

/// <summary>What the audit tested and what it did not; shown in the report next to the verdict.</summary>
public sealed record Coverage(IReadOnlyList<string> Tested, IReadOnlyList<string> NotTested, IReadOnlyList<string> Cautions);
