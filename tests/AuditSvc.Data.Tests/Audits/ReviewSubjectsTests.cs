using AuditSvc.Data.Audits;

namespace AuditSvc.Data.Tests.Audits;

public sealed class ReviewSubjectsTests
{
    [Fact]
    public void Cues_AuditJson_NamesFindingsColumnsInterventionValuesAndPlaceCues()
    {
        const string json = """
            {"image_set":{"attributes":[{"name":"belt","values":[{"value":"blue","count":3}]}]},
             "attributes":[{"name":"stamp","cues":[{"value":"yes"}],"inferred":false},{"name":"place:top-left","cues":[],"inferred":true}],
             "findings":[{"attribute":"site","value":"b"}],"cue_groups":[],"candidates":[{"attribute":"place:bottom-right"},{"attribute":null}]}
            """;

        var keys = ReviewSubjects.Cues([("stamp", "no")], json);

        Assert.Equal(["belt=blue", "place:bottom-right=yes", "place:top-left=yes", "site=b", "stamp=no", "stamp=yes"], keys.Order(StringComparer.Ordinal));
    }

    [Theory]
    [InlineData(null)]
    [InlineData("")]
    [InlineData("not json")]
    [InlineData("[1,2]")]
    public void Cues_NoUsableResult_OnlyTheFindings(string? json) =>
        Assert.Equal(["stamp=yes"], ReviewSubjects.Cues([("stamp", "yes")], json));
}
