using AuditSvc.Compute.Models;

namespace AuditSvc.Compute.Tests.Models;

public class WireFieldsTests
{
    [Fact]
    public void Read_PublishedEncodings_GiveFieldRanges()
    {
        // Worked examples of the protobuf encoding guide (protobuf.dev/programming-guides/encoding): Test1 with
        // a = 150 is 08 96 01; Test2 with b = "testing" is 12 07 74 65 73 74 69 6e 67. Here one after the other.
        byte[] data = [0x08, 0x96, 0x01, 0x12, 0x07, 0x74, 0x65, 0x73, 0x74, 0x69, 0x6e, 0x67];
        var fields = WireFields.Read(data, 0, data.Length);
        Assert.Equal(2, fields.Count);
        Assert.Equal(new WireFields.Field(1, WireFields.Varint, 0, 1, 3), fields[0]);
        Assert.Equal(new WireFields.Field(2, WireFields.LengthDelimited, 3, 5, 12), fields[1]);
        Assert.Equal("testing", System.Text.Encoding.ASCII.GetString(data, fields[1].ValueStart, fields[1].ValueLength));
    }

    [Fact]
    public void WriteVarint_150_IsThePublishedTwoBytes()
    {
        // 150 as a varint is 96 01 (the same guide, "Base 128 Varints").
        using var s = new MemoryStream();
        WireFields.WriteVarint(s, 150);
        Assert.Equal(new byte[] { 0x96, 0x01 }, s.ToArray());
    }

    [Theory]
    [InlineData(new byte[] { 0x12, 0x07, 0x74 })]        // a length past the end
    [InlineData(new byte[] { 0x08, 0x96 })]              // a varint cut short
    [InlineData(new byte[] { 0x0d, 0x01, 0x02 })]        // a fixed32 cut short
    [InlineData(new byte[] { 0x00, 0x01 })]              // field number 0
    [InlineData(new byte[] { 0x0e, 0x01 })]              // wire type 6 does not exist
    public void Read_BrokenEncoding_ThrowsInvalidData(byte[] data) =>
        Assert.Throws<InvalidDataException>(() => WireFields.Read(data, 0, data.Length));

    [Fact]
    public void Read_Group_EndsTheList()
    {
        // Field 1 as a start-group tag (wire type 3): the caller parses the message whole instead.
        byte[] data = [0x08, 0x01, 0x0b, 0x08, 0x01, 0x0c];
        var fields = WireFields.Read(data, 0, data.Length);
        Assert.Equal(WireFields.Group, fields[^1].WireType);
    }
}
