namespace AuditSvc.Compute.Models;

/// <summary>
/// The fields of one protobuf message as byte ranges of its encoding, read without decoding their values: lets a
/// rewrite copy a model's weights through untouched instead of parsing them into a second copy.
/// </summary>
internal static class WireFields
{
    public const int Varint = 0, Fixed64 = 1, LengthDelimited = 2, Group = 3, Fixed32 = 5;

    /// <summary>One field: its number and wire type, where it starts (at its tag), where its value starts, and its end.</summary>
    public readonly record struct Field(int Number, int WireType, int Start, int ValueStart, int End)
    {
        public int Length => End - Start;

        public int ValueLength => End - ValueStart;
    }

    /// <summary>
    /// The fields of the message encoded in <paramref name="data"/>[offset, offset + count), in the order they appear.
    /// A group (a deprecated wire type) ends the list, as the last field: callers that meet one parse the message whole.
    /// </summary>
    public static List<Field> Read(byte[] data, int offset, int count)
    {
        ArgumentNullException.ThrowIfNull(data);
        ArgumentOutOfRangeException.ThrowIfNegative(offset);
        ArgumentOutOfRangeException.ThrowIfNegative(count);
        int end = checked(offset + count);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(end, data.Length, nameof(count));
        var fields = new List<Field>();
        int at = offset;
        while (at < end)
        {
            int start = at;
            ulong tag = ReadVarint(data, ref at, end);
            ulong number = tag >> 3;
            int wire = (int)(tag & 7);
            if (number is 0 or > int.MaxValue) throw new InvalidDataException($"field number {number} at byte {start}");
            int valueStart = at;
            switch (wire)
            {
                case Varint:
                    ReadVarint(data, ref at, end);
                    break;
                case Fixed64:
                    at = Advance(at, 8, end, start);
                    break;
                case Fixed32:
                    at = Advance(at, 4, end, start);
                    break;
                case LengthDelimited:
                    ulong length = ReadVarint(data, ref at, end);
                    if (length > (ulong)(end - at)) throw new InvalidDataException($"field {number} at byte {start} runs past the message's end");
                    valueStart = at;
                    at += (int)length;
                    break;
                case Group:
                case 4:
                    fields.Add(new Field((int)number, Group, start, valueStart, end));
                    return fields;
                default:
                    throw new InvalidDataException($"wire type {wire} of field {number} at byte {start}");
            }
            fields.Add(new Field((int)number, wire, start, valueStart, at));
        }
        return fields;
    }

    /// <summary>Writes <paramref name="value"/> as a protobuf varint (a tag or a length).</summary>
    public static void WriteVarint(Stream destination, ulong value)
    {
        Span<byte> bytes = stackalloc byte[10];
        int n = 0;
        while (value >= 0x80)
        {
            bytes[n++] = (byte)(value | 0x80);
            value >>= 7;
        }
        bytes[n++] = (byte)value;
        destination.Write(bytes[..n]);
    }

    private static int Advance(int at, int by, int end, int start) =>
        by <= end - at ? at + by : throw new InvalidDataException($"field at byte {start} runs past the message's end");

    private static ulong ReadVarint(byte[] data, ref int at, int end)
    {
        ulong value = 0;
        for (int shift = 0; shift < 64; shift += 7)
        {
            if (at >= end) throw new InvalidDataException($"a varint at byte {at} runs past the message's end");
            byte b = data[at++];
            value |= (ulong)(b & 0x7F) << shift;
            if (b < 0x80) return value;
        }
        throw new InvalidDataException($"a varint before byte {at} is longer than 10 bytes");
    }
}
