namespace AuditSvc.Compute.Imaging;

/// <summary>
/// Tells a JPEG cut short from a whole one, fed the file's bytes in order (intake feeds it while hashing).
/// Inside entropy-coded data a 0xFF byte is always followed by 0x00 or a restart marker (ITU-T T.81, B.1.1.5,
/// recalled from memory), so an end-of-image marker (FF D9) after the last start-of-scan (FF DA) means the scan
/// data ended properly; a file cut mid-scan has none. Decoders fill the missing rows silently, hence this check.
/// </summary>
public sealed class JpegCompleteness
{
    private bool _afterFf, _inScan, _sawScan;

    public void Feed(ReadOnlySpan<byte> bytes)
    {
        foreach (var b in bytes)
        {
            if (_afterFf)
            {
                if (b == 0xDA) { _inScan = true; _sawScan = true; }
                else if (b == 0xD9) _inScan = false;
                _afterFf = b == 0xFF; // fill bytes: FF FF ... D9
            }
            else _afterFf = b == 0xFF;
        }
    }

    /// <summary>True when the file had a scan and an end-of-image marker after its last scan.</summary>
    public bool Complete => _sawScan && !_inScan;
}
