using AuditSvc.Core.ImageSets;

namespace AuditSvc.Core.Tests.ImageSets;

/// <summary>Cells auditsvc writes are never run as formulas by a spreadsheet (OWASP "CSV Injection", recalled from memory).</summary>
public class CsvCellTests
{
    [Theory]
    [InlineData("=SUM(A1:A9)", "'=SUM(A1:A9)")]
    [InlineData("+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0")]
    [InlineData("-2+3", "'-2+3")]
    [InlineData("@HYPERLINK(\"x\")", "\"'@HYPERLINK(\"\"x\"\")\"")]
    [InlineData("\tTAB", "'\tTAB")]
    [InlineData("-0.25", "-0.25")]
    [InlineData("+1e3", "+1e3")]
    [InlineData("plain", "plain")]
    [InlineData("a,b", "\"a,b\"")]
    [InlineData("two\nlines", "\"two\nlines\"")]
    [InlineData("", "")]
    public void Safe_Cell_IsNeutralisedAndQuoted(string cell, string written) => Assert.Equal(written, CsvCell.Safe(cell));

    [Fact]
    public void Line_JoinsSafeCells() => Assert.Equal("a,'=1+1,\"x,y\"", CsvCell.Line(["a", "=1+1", "x,y"]));
}
