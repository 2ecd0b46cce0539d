namespace AuditSvc.Compute.Models;

/// <summary>
/// Lets the parser read float initializers stored as packed repeated floats (TensorProto field 4 'float_data') straight
/// into 'raw_data' (field 9). The packed payload is already the little-endian floats raw_data holds, and both tags are
/// one byte (0x22, 0x4A), so swapping that byte changes no length: the parser then allocates one exact byte array per
/// tensor instead of growing float arrays (about twice the weights' size, then packed again by <see cref="RawWeights"/>).
/// </summary>
internal static class RawWeightTags
{
    private const byte FloatDataTag = (4 << 3) | WireFields.LengthDelimited; // 0x22
    private const byte RawDataTag = (9 << 3) | WireFields.LengthDelimited;   // 0x4A
    private const int ModelGraph = 7, GraphInitializer = 5, TensorDataType = 2, TensorFloatData = 4, TensorRawData = 9;
    private const ulong FloatType = 1;

    // Small tensors gain nothing from the swap and are packed after parsing: the offsets kept stay under 1/128 of the
    // file's size, whatever a file holds.
    internal const int MinSwapBytes = 1024;

    /// <summary>
    /// Walks ModelProto.graph → GraphProto.initializer → TensorProto reading only tags and lengths, seeking past every
    /// payload, and returns the file offsets of the float_data tags to swap, in order. Returns null on anything it does
    /// not fully understand (a malformed or unusual file): the caller then parses unchanged and the parser reports it.
    /// </summary>
    public static long[]? Find(Stream file)
    {
        ArgumentNullException.ThrowIfNull(file);
        if (!file.CanSeek) return null;
        var found = new List<long>();
        var reader = new Reader(file);
        return reader.Fields(0, file.Length, ModelGraph, (start, end) =>
                   reader.Fields(start, end, GraphInitializer, (ts, te) => reader.Tensor(ts, te, found)))
            ? found.ToArray()
            : null;
    }

    private sealed class Reader(Stream file)
    {
        // Visits each length-delimited field numbered `into` within [start, end); false on any malformation.
        public bool Fields(long start, long end, int into, Func<long, long, bool> visit)
        {
            file.Position = start;
            while (file.Position < end)
            {
                if (!Tag(end, out int number, out int wire, out _)) return false;
                if (!Skip(wire, end, out long valueStart)) return false;
                long next = file.Position;
                if (number == into && wire == WireFields.LengthDelimited)
                {
                    if (!visit(valueStart, next)) return false;
                    file.Position = next;
                }
            }
            return file.Position == end;
        }

        // Records the float_data tag of a float tensor whose weights are one packed float_data field of at least
        // MinSwapBytes and nothing else:
        // raw_data is a single bytes field (the last one wins), so two chunks, unpacked floats or an existing raw_data
        // are left to RawWeights.Pack, as is a payload that is not whole floats (the parser reports that one).
        public bool Tensor(long start, long end, List<long> found)
        {
            file.Position = start;
            long tagAt = -1;
            int floatFields = 0;
            bool other = false;
            ulong dataType = 0;
            while (file.Position < end)
            {
                long at = file.Position;
                if (!Tag(end, out int number, out int wire, out int tagBytes)) return false;
                if (number == TensorDataType && wire == WireFields.Varint)
                {
                    if (!Varint(end, out dataType)) return false;
                    continue;
                }
                if (!Skip(wire, end, out long valueStart)) return false;
                if (number == TensorFloatData)
                {
                    floatFields++;
                    long length = file.Position - valueStart;
                    if (wire == WireFields.LengthDelimited && tagBytes == 1 && length % sizeof(float) == 0 && length >= MinSwapBytes) tagAt = at;
                    else other = true;
                }
                else if (number == TensorRawData)
                {
                    other = true;
                }
            }
            if (file.Position != end) return false;
            if (dataType == FloatType && floatFields == 1 && !other && tagAt >= 0) found.Add(tagAt);
            return true;
        }

        private bool Tag(long end, out int number, out int wire, out int bytes)
        {
            long at = file.Position;
            number = wire = bytes = 0;
            if (!Varint(end, out ulong tag) || tag is 0 or > uint.MaxValue) return false;
            number = (int)(tag >> 3);
            wire = (int)(tag & 7);
            bytes = (int)(file.Position - at);
            return number != 0;
        }

        // Moves past a field's value; valueStart is where its payload begins (after the length, for wire type 2).
        private bool Skip(int wire, long end, out long valueStart)
        {
            valueStart = file.Position;
            switch (wire)
            {
                case WireFields.Varint:
                    return Varint(end, out _);
                case WireFields.Fixed64:
                    return Seek(8, end);
                case WireFields.Fixed32:
                    return Seek(4, end);
                case WireFields.LengthDelimited:
                    if (!Varint(end, out ulong length)) return false;
                    valueStart = file.Position;
                    return length <= (ulong)(end - file.Position) && Seek((long)length, end);
                default:
                    return false; // groups and invalid wire types: the parser decides
            }
        }

        private bool Seek(long by, long end)
        {
            if (by > end - file.Position) return false;
            file.Position += by;
            return true;
        }

        private bool Varint(long end, out ulong value)
        {
            value = 0;
            for (int shift = 0; shift < 64; shift += 7)
            {
                if (file.Position >= end) return false;
                int b = file.ReadByte();
                if (b < 0) return false;
                value |= (ulong)(b & 0x7F) << shift;
                if (b < 0x80) return true;
            }
            return false;
        }
    }

    /// <summary>A read-only, forward-only view of <paramref name="inner"/> (read from its start) with the byte at each
    /// of <paramref name="offsets"/> (ascending) read as raw_data's tag.</summary>
    public sealed class Retagged(Stream inner, long[] offsets) : Stream
    {
        private long _position;
        private int _next;

        public override bool CanRead => true;
        public override bool CanSeek => false;
        public override bool CanWrite => false;
        public override long Length => throw new NotSupportedException();
        public override long Position { get => _position; set => throw new NotSupportedException(); }

        public override int Read(byte[] buffer, int offset, int count) => Read(buffer.AsSpan(offset, count));

        public override int Read(Span<byte> buffer)
        {
            int n = inner.Read(buffer);
            long end = _position + n;
            while (_next < offsets.Length && offsets[_next] < end)
            {
                long at = offsets[_next++];
                // Only float_data's tag is swapped: a file changed since Find is parsed (and hashed) as it now reads.
                if (at >= _position && buffer[(int)(at - _position)] == FloatDataTag) buffer[(int)(at - _position)] = RawDataTag;
            }
            _position = end;
            return n;
        }

        public override void Flush() { }
        public override long Seek(long offset, SeekOrigin origin) => throw new NotSupportedException();
        public override void SetLength(long value) => throw new NotSupportedException();
        public override void Write(byte[] buffer, int offset, int count) => throw new NotSupportedException();
    }
}
