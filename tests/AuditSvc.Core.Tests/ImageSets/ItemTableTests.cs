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

    // SHA-256 of the three bytes "abc": FIPS 180-2, appendix B.1 (the standard's own worked example).
    private const string AbcSha256 = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad";

    [Fact]
    public void InFolder_PathAndHash_ReadAsTheFullForm()
    {
        var compact = ImageItem.InFolder(3, 4, "/sets/lemons", "line-2/0001.png", 1, [0, -1], Convert.FromHexString(AbcSha256));
        var full = new ImageItem(3, 4, "/sets/lemons/line-2/0001.png", "line-2/0001.png", 1, [0, -1], AbcSha256);

        Assert.Equal((full.Path, full.RelativePath, full.Sha256), (compact.Path, compact.RelativePath, compact.Sha256));
        Assert.Equal(AbcSha256, compact.Sha256);
    }

    [Theory]
    [InlineData("")]
    [InlineData("h7")]
    [InlineData("BA7816BF8F01CFEA414140DE5DAE2223B00361A396177A9CB410FF61F20015AD")] // upper case is kept as given
    public void Constructor_HashThatIsNotLowerHex_IsKeptAsGiven(string text) =>
        Assert.Equal(text, new ImageItem(0, 1, "/x/a.png", "a.png", 0, [], text).Sha256);

    [Fact]
    public void With_NewAttributes_KeepsPathAndHash()
    {
        var item = ImageItem.InFolder(0, 1, "/sets", "a.png", 0, [1], Convert.FromHexString(AbcSha256));
        var extended = item with { AttributeValues = [1, 0] };

        Assert.Equal(("/sets/a.png", AbcSha256, 2), (extended.Path, extended.Sha256, extended.AttributeValues.Length));
    }
}
