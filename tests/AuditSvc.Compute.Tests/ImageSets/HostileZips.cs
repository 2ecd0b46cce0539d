using System.IO.Compression;

namespace AuditSvc.Compute.Tests.ImageSets;

/// <summary>Invented archives for the extractor's tests (shared with the service's and the command line's tests).</summary>
public static class HostileZips
{
    /// <summary>Invented archives, one per kind of bad input (and one good one).</summary>
    public static byte[] Build(string kind)
    {
        using var ms = new MemoryStream();
        using (var zip = new ZipArchive(ms, ZipArchiveMode.Create, leaveOpen: true))
        {
            void Add(string name, byte[] content, CompressionLevel level = CompressionLevel.Fastest, int? unixMode = null)
            {
                var e = zip.CreateEntry(name, level);
                if (unixMode is { } mode) e.ExternalAttributes = mode << 16;
                using var s = e.Open();
                s.Write(content);
            }
            var png = "not really a png"u8.ToArray();
            switch (kind)
            {
                case "good": Add("cat/a.png", png); Add("dog/b.png", png); break;
                case "good-flat": Add("a.png", png); Add("b.png", png); break;
                case "dotdot": Add("cat/a.png", png); Add("../evil.png", png); break;
                case "dotdot-inner": Add("cat/../../evil.png", png); break;
                case "absolute": Add("/tmp/evil.png", png); break;
                case "backslash": Add("..\\evil.png", png); break;
                case "drive": Add("C:/evil.png", png); break;
                case "symlink": Add("cat/link.png", "/etc/passwd"u8.ToArray(), unixMode: 0xA1FF); break;
                case "fifo": Add("cat/pipe.png", png, unixMode: 0x11B6); break;
                case "duplicate": Add("cat/a.png", png); Add("cat/a.png", png); break;
                case "file-folder": Add("cat", png); Add("cat/a.png", png); break;
                case "folder-file": Add("cat/a.png", png); Add("cat", png); break;
                case "empty": break;
                case "only-folders": zip.CreateEntry("cat/"); break;
                case "ratio-bomb": Add("cat/a.png", new byte[4 << 20], CompressionLevel.SmallestSize); break;
                case "bzip2": case "lzma": Add("cat/a.png", png, CompressionLevel.NoCompression); break;
                default: throw new ArgumentOutOfRangeException(nameof(kind));
            }
        }
        var bytes = ms.ToArray();
        if (kind is "bzip2" or "lzma") SetMethod(bytes, kind == "bzip2" ? (byte)12 : (byte)14);
        return bytes;
    }

    // The compression method sits at offset 8 of each local header (PK\3\4) and offset 10 of each central one (PK\1\2).
    private static void SetMethod(byte[] zip, byte method)
    {
        for (int i = 0; i + 4 < zip.Length; i++)
        {
            if (zip[i] != 'P' || zip[i + 1] != 'K') continue;
            if (zip[i + 2] == 3 && zip[i + 3] == 4) zip[i + 8] = method;
            if (zip[i + 2] == 1 && zip[i + 3] == 2) zip[i + 10] = method;
        }
    }
}
