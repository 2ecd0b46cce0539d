namespace AuditSvc.Core;

/// <summary>Recognises a full disk (or an exhausted quota) among I/O failures: a state of the machine, not a bug.</summary>
public static class DiskFull
{
    /// <summary>True when <paramref name="e"/> or an exception inside it is an <see cref="IOException"/> for ENOSPC or EDQUOT.</summary>
    public static bool Is(Exception? e)
    {
        for (; e is not null; e = e.InnerException)
            if (e is IOException io && (IsCode(io.HResult) || IsPreallocationFailure(io))) return true;
        return false;
    }

    // .NET's File.WriteAllText/WriteAllBytes preallocate and, when that finds no room, throw an IOException with no
    // errno, only its message ("… because the disk was full."; the runtime's own English text, as servers run it).
    // Our writers stream instead; this catches the ones that do not.
    private const int GenericIo = unchecked((int)0x80131620); // COR_E_IO

    private static bool IsPreallocationFailure(IOException io) =>
        io.HResult == GenericIo && io.Message.Contains("because the disk was full", StringComparison.Ordinal);

    // ENOSPC (28) and EDQUOT (122) on Linux (.NET carries the errno as the HResult); ERROR_DISK_FULL (0x70) and
    // ERROR_HANDLE_DISK_FULL (0x27) on Windows.
    private static bool IsCode(int hresult) => (hresult & 0xFFFF) is 28 or 122 or 0x70 or 0x27;
}
