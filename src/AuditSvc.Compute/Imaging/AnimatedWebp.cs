using System.Buffers.Binary;

namespace AuditSvc.Compute.Imaging;

/// <summary>
/// Recognises an animated WebP from its RIFF container (the VP8X animation flag, the canvas size and the ANMF frame
/// chunks) before any decoder sees it, reading chunk headers only. ImageSharp 2.1 refuses animated WebP outright (a
/// NotSupportedException from Identify and Load), so such an image is skipped and reported with its frame count and
/// canvas instead of a decoder's exception; the walk is bounded, so a file of countless tiny frames costs little.
/// </summary>
public static class AnimatedWebp
{
    /// <summary>Chunks read at most; past it the frame count is reported as "more than".</summary>
    public const int MaxChunks = 65_536;

    private const byte AnimationFlag = 0x02; // VP8X flags: Rsv(2) ICC Alpha EXIF XMP Animation Rsv, MSB first

    /// <summary>The reason an animated WebP is refused, or null for anything else (the stream is left where it was).</summary>
    public static string? Problem(Stream stream)
    {
        ArgumentNullException.ThrowIfNull(stream);
        if (!stream.CanSeek || !stream.CanRead) return null;
        var start = stream.Position;
        try
        {
            Span<byte> head = stackalloc byte[30];
            if (!ReadExactly(stream, head)) return null;
            if (!head[..4].SequenceEqual("RIFF"u8) || !head[8..12].SequenceEqual("WEBP"u8) || !head[12..16].SequenceEqual("VP8X"u8)) return null;
            var vp8xSize = BinaryPrimitives.ReadUInt32LittleEndian(head[16..20]);
            if (vp8xSize < 10 || (head[20] & AnimationFlag) == 0) return null;
            int canvasWidth = 1 + U24(head[24..27]), canvasHeight = 1 + U24(head[27..30]);

            long frames = 0, chunks = 0;
            long pos = start + 20 + vp8xSize + (vp8xSize & 1);
            Span<byte> chunk = stackalloc byte[8];
            while (chunks < MaxChunks && pos + 8 <= stream.Length)
            {
                stream.Position = pos;
                if (!ReadExactly(stream, chunk)) break;
                var size = BinaryPrimitives.ReadUInt32LittleEndian(chunk[4..]);
                if (chunk[..4].SequenceEqual("ANMF"u8)) frames++;
                chunks++;
                pos += 8L + size + (size & 1);
            }
            var count = chunks >= MaxChunks && pos + 8 <= stream.Length ? $"more than {frames}" : frames.ToString(System.Globalization.CultureInfo.InvariantCulture);
            return $"animated WebP ({count} frames on a {canvasWidth}×{canvasHeight} canvas): animated WebP is not decoded; give a still image, such as its first frame";
        }
        finally
        {
            stream.Position = start;
        }
    }

    private static int U24(ReadOnlySpan<byte> b) => b[0] | (b[1] << 8) | (b[2] << 16);

    private static bool ReadExactly(Stream stream, Span<byte> buffer)
    {
        int read = 0;
        while (read < buffer.Length)
        {
            var n = stream.Read(buffer[read..]);
            if (n == 0) return false;
            read += n;
        }
        return true;
    }
}
