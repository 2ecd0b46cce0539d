using System.Text.Json;
using System.Text.Json.Serialization;

namespace AuditSvc.Core.Gate;

/// <summary>
/// Reads and checks a policy file (JSON, snake_case, described by schemas/policy.schema.json). Unknown fields,
/// values out of range and contradictions are refused with the field named; a missing field keeps its default.
/// </summary>
public static class PolicyFile
{
    private static readonly JsonSerializerOptions Options = new()
    {
        PropertyNamingPolicy = JsonNamingPolicy.SnakeCaseLower,
        UnmappedMemberHandling = JsonUnmappedMemberHandling.Disallow,
        ReadCommentHandling = JsonCommentHandling.Skip,
        AllowTrailingCommas = true,
        // A key given twice is a mistake to name, not a value to pick silently; a policy is flat, so depth is small.
        AllowDuplicateProperties = false,
        MaxDepth = 8,
        Converters = { new JsonStringEnumConverter(JsonNamingPolicy.SnakeCaseLower) },
    };

    /// <summary>Largest policy file read (a policy is a few hundred bytes).</summary>
    public const long MaxBytes = 1 << 20;

    public static AuditPolicy Load(string path)
    {
        string text;
        try
        {
            var info = new FileInfo(path);
            if (info.Exists && info.Length > MaxBytes) throw new AuditInputException(path, $"policy file is larger than {MaxBytes} bytes");
            text = File.ReadAllText(path);
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            throw new AuditInputException(path, "cannot read the policy file", e);
        }
        return Parse(text, path);
    }

    public static AuditPolicy Parse(string json, string source = "policy")
    {
        AuditPolicy? policy;
        try
        {
            policy = JsonSerializer.Deserialize<AuditPolicy>(json, Options);
        }
        catch (JsonException e)
        {
            var field = string.IsNullOrEmpty(e.Path) || e.Path == "$" ? "" : $" at {e.Path.TrimStart('$', '.')}";
            throw new AuditInputException(source, $"not a valid policy{field}: {FirstLine(e.Message)}", e);
        }
        if (policy is null) throw new AuditInputException(source, "the policy is empty (expected a JSON object)");
        Validate(policy, source);
        return policy;
    }

    public static void Validate(AuditPolicy p, string source)
    {
        void Range(string field, double v, double lo, double hi, bool openLow = false)
        {
            if (double.IsNaN(v) || v > hi || v < lo || (openLow && v == lo))
                throw new AuditInputException(source, $"field '{field}' is {v}, expected {(openLow ? "above" : "at least")} {lo} and at most {hi}");
        }
        Range("leakage_threshold", p.LeakageThreshold, 0, 1, openLow: true);
        Range("fdr_level", p.FdrLevel, 0, 0.5, openLow: true);
        Range("gate_level", p.GateLevel, 0, 0.5, openLow: true);
        Range("min_auroc", p.MinAuroc, 0.5, 1);
        Range("min_group_size", p.MinGroupSize, 1, 1_000_000);
        Range("min_per_side", p.MinPerSide, 1, 1_000_000);
        Range("confounded_v", p.ConfoundedV, 0, 1, openLow: true);
        Range("intervention_budget", p.InterventionBudget, 0, 1_000_000);
        if (p.MaxLeakageRise is { } rise) Range("max_leakage_rise", rise, 0, 1, openLow: true);
        foreach (var (name, t) in p.AttributeThresholds) Range($"attribute_thresholds.{name}", t, 0, 1, openLow: true);
        foreach (var name in p.AttributeThresholds.Keys.Where(p.IsAllowed))
            throw new AuditInputException(source, $"field 'attribute_thresholds.{name}' contradicts 'allowed_attributes': an allowed attribute never blocks, so it cannot have a threshold");
        var dup = p.AllowedAttributes.GroupBy(a => a, StringComparer.OrdinalIgnoreCase).FirstOrDefault(g => g.Count() > 1);
        if (dup is not null) throw new AuditInputException(source, $"field 'allowed_attributes' lists '{dup.Key}' twice");
    }

    /// <summary>
    /// Attribute names in the policy must name columns of the image set (or the inferred place cues, "place:…"):
    /// a misspelt allowed attribute would otherwise silently block, a misspelt threshold silently not apply.
    /// A set without any attribute column is not checked: one release policy serves bare sets too, and there is
    /// nothing there a name could be a misspelling of.
    /// </summary>
    public static void CheckAttributes(AuditPolicy p, IReadOnlyCollection<string> columns, string source)
    {
        ArgumentNullException.ThrowIfNull(p);
        ArgumentNullException.ThrowIfNull(columns);
        if (columns.Count == 0) return;
        var named = p.AllowedAttributes.Select(a => ("allowed_attributes", a)).Concat(p.AttributeThresholds.Keys.Select(a => ("attribute_thresholds", a)));
        foreach (var (field, name) in named)
        {
            if (name.StartsWith("place:", StringComparison.Ordinal) || columns.Contains(name, StringComparer.OrdinalIgnoreCase)) continue;
            var closest = columns.OrderBy(c => EditDistance(c.ToLowerInvariant(), name.ToLowerInvariant())).ThenBy(c => c, StringComparer.Ordinal).FirstOrDefault();
            throw new AuditInputException(source, $"field '{field}' names '{name}', which is no attribute column of the image set (closest: '{closest}')");
        }
    }

    // Levenshtein distance, two rows.
    private static int EditDistance(string a, string b)
    {
        var prev = new int[b.Length + 1];
        var cur = new int[b.Length + 1];
        for (int j = 0; j <= b.Length; j++) prev[j] = j;
        for (int i = 1; i <= a.Length; i++)
        {
            cur[0] = i;
            for (int j = 1; j <= b.Length; j++)
                cur[j] = Math.Min(Math.Min(cur[j - 1] + 1, prev[j] + 1), prev[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1));
            (prev, cur) = (cur, prev);
        }
        return prev[b.Length];
    }

    public static string Serialize(AuditPolicy p) => JsonSerializer.Serialize(p, new JsonSerializerOptions(Options) { WriteIndented = true });

    private static string FirstLine(string s) => s.Split('\n')[0];
}
