namespace AuditSvc.Core.Audits;

/// <summary>
/// What a measure is called in words (verdict reasons, pages, the report); audit.json keeps the snake_case name.
/// One table, so the gate's reasons and the reviewer's pages never spell a measure two ways.
/// </summary>
public static class MeasureNames
{
    public static string Words(string name) => name switch
    {
        "accuracy_gap" => "accuracy gap",
        "colour_transfer" => "colour transfer",
        "transplant" => "transplant",
        "occlusion" => "occlusion",
        "cramers_v" => "Cramér's V",
        "leakage_rise" => "leakage rise",
        _ => name.Replace('_', ' '),
    };
}
