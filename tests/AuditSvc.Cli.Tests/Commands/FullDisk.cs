using System.Diagnostics;

namespace AuditSvc.Cli.Tests.Commands;

/// <summary>
/// A real full disk for a test: a small tmpfs mounted on a folder, so writes past its size fail with ENOSPC from the
/// kernel. Mounting needs root (or CAP_SYS_ADMIN) and is refused in some containers: then <see cref="TryMount"/> says
/// so and the test falls back to /dev/full, which answers every write with ENOSPC. Never a skip.
/// </summary>
public static class FullDisk
{
    /// <summary>Mounts a tmpfs of <paramref name="size"/> (e.g. "16k") on <paramref name="folder"/>; false when refused.</summary>
    public static bool TryMount(string folder, string size)
    {
        try
        {
            return Run("mount", "-t", "tmpfs", "-o", $"size={size},mode=0777", "tmpfs", folder) == 0;
        }
        catch (System.ComponentModel.Win32Exception)
        {
            return false; // no mount command on this machine
        }
    }

    public static void Unmount(string folder) => Run("umount", folder);

    private static int Run(string command, params string[] args)
    {
        var psi = new ProcessStartInfo(command) { UseShellExecute = false, RedirectStandardError = true, RedirectStandardOutput = true };
        foreach (var a in args) psi.ArgumentList.Add(a);
        using var p = Process.Start(psi)!;
        p.StandardOutput.ReadToEnd();
        p.StandardError.ReadToEnd();
        p.WaitForExit();
        return p.ExitCode;
    }
}
