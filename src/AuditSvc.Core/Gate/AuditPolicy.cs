using System.Text.Json.Serialization;

namespace AuditSvc.Core.Gate;

/// <summary>What to do with an attribute that nearly determines the label and so cannot be separated from it.</summary>
[JsonConverter(typeof(JsonStringEnumConverter<ConfoundedAction>))]
public enum ConfoundedAction
{
    /// <summary>Block the release until counter-examples are collected (default: the audit cannot clear it).</summary>
    [JsonStringEnumMemberName("block")] Block,
    /// <summary>Let the verdict stand on the other attributes, listing the attribute as a warning.</summary>
    [JsonStringEnumMemberName("warn")] Warn,
}

/// <summary>
/// Thresholds and allowed attributes that decide the verdict, and the statistics' settings. Every field has a
/// default that generalises (none is fitted to the demo); a policy file overrides any of them.
/// </summary>
public sealed record AuditPolicy
{
    /// <summary>Leakage score at or above which a non-allowed attribute blocks the release.</summary>
    public double LeakageThreshold { get; init; } = 0.2;

    /// <summary>Per-attribute thresholds that replace <see cref="LeakageThreshold"/>.</summary>
    public IReadOnlyDictionary<string, double> AttributeThresholds { get; init; } = new Dictionary<string, double>();

    /// <summary>Attributes allowed to drive the label (class-defining ones): never block.</summary>
    public IReadOnlyList<string> AllowedAttributes { get; init; } = [];

    /// <summary>Benjamini–Hochberg false discovery rate for findings.</summary>
    public double FdrLevel { get; init; } = 0.05;

    /// <summary>Smallest label-stratified AUROC of a finding.</summary>
    public double MinAuroc { get; init; } = 0.8;

    /// <summary>Smallest (label, value) group whose accuracy is reported and used.</summary>
    public int MinGroupSize { get; init; } = 10;

    /// <summary>Labels with fewer images than this on either side of a value are skipped by the rank test.</summary>
    public int MinPerSide { get; init; } = 3;

    /// <summary>Cramér's V (bias-corrected) at or above which an attribute is confounded with the label.</summary>
    public double ConfoundedV { get; init; } = 0.95;

    public ConfoundedAction Confounded { get; init; } = ConfoundedAction.Block;

    /// <summary>
    /// Level at which a behavioural measure's test must reject "no effect", after Benjamini–Hochberg adjustment across
    /// the audit's measures, for the measure to block.
    /// </summary>
    public double GateLevel { get; init; } = 0.05;

    /// <summary>Most model runs the intervention pass may spend on one attribute (treated and control runs both count).</summary>
    public int InterventionBudget { get; init; } = 600;

    /// <summary>When comparing with an earlier audit: a rise of leakage at or above this blocks (null: off).</summary>
    public double? MaxLeakageRise { get; init; }

    public double ThresholdFor(string attribute) =>
        AttributeThresholds.TryGetValue(attribute, out var t) ? t : LeakageThreshold;

    public bool IsAllowed(string attribute) =>
        AllowedAttributes.Any(a => string.Equals(a, attribute, StringComparison.OrdinalIgnoreCase));
}
