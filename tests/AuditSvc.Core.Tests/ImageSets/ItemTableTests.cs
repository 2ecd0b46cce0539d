using AuditSvc.Core.ImageSets;

namespace AuditSvc.Core.Tests.ImageSets;

public sealed class ItemTableTests
{
    private static ItemTable ThreeLabels() =>
        new(["0", "1", "2"], [], [], new IntakeReport("manifest.csv", 0, 0, []));

    // Found by `bench --audit-sizes` on ResNet-18 (512 outputs) with a set labelled 0–2: a cue pushed the decisions toward
    // output 37 and naming it indexed the set's three labels, so the audit ended in exit 3.
    [Fact]
    public void ClassName_OutputBeyondTheSetsLabels_NamesTheOutputInsteadOfFailing()
    {
        var table = ThreeLabels();

        Assert.Equal(("1", "output 37", "output -1"), (table.ClassName(1), table.ClassName(37), table.ClassName(-1)));
    }
}
