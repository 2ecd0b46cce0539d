using System.Globalization;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Statistics;

namespace AuditSvc.Core.Gate;

/// <summary>
/// The statistics of a paired intervention: each pair is one recipient (or a label-matched couple) with an outcome in
/// the treated and in the control arm. Effect = treated rate − control rate = (b − c)/n over the discordant pairs;
/// its test is McNemar's exact test on those pairs, its interval Newcombe's (1998) score interval for a paired
/// difference. Both ignore the concordant pairs' share of the noise, which is right: only discordant pairs carry
/// information about the difference.
/// </summary>
public static class PairedMeasures
{
    /// <param name="treated">Per pair, whether the outcome happened in the treated arm.</param>
    /// <param name="control">Per pair, whether it happened in the control arm.</param>
    /// <param name="what">What the outcome is, for the detail line ("moved to mouldy").</param>
    public static Measure? Of(string name, IReadOnlyList<bool> treated, IReadOnlyList<bool> control, string what, string design)
    {
        ArgumentNullException.ThrowIfNull(treated);
        ArgumentNullException.ThrowIfNull(control);
        if (treated.Count != control.Count) throw new ArgumentException("treated and control must pair up", nameof(control));
        int n = treated.Count;
        if (n == 0) return null;
        int a = 0, b = 0, c = 0, d = 0;
        for (int i = 0; i < n; i++)
        {
            if (treated[i] && control[i]) a++;
            else if (treated[i]) b++;
            else if (control[i]) c++;
            else d++;
        }
        var test = McNemar.Test(b, c);
        var (low, high) = NewcombeInterval.Paired(a, b, c, d);
        double effect = (b - c) / (double)n;
        return new Measure(name, effect, n, low, high, test.PExact,
            string.Create(CultureInfo.InvariantCulture,
                $"{design}; {a + b}/{n} {what} treated, {a + c}/{n} control; {b} pairs only treated, {c} only control (McNemar exact, Newcombe paired interval)"))
        {
            TreatedHits = a + b,
            ControlHits = a + c,
        };
    }
}
