using Microsoft.ML.OnnxRuntime;

namespace AuditSvc.Compute.Models;

/// <summary>
/// Builds an ONNX Runtime session from a model written to a private temporary file that is removed as soon as the
/// session exists: a rewritten model then never sits in memory as a serialised array beside the runtime's own copy
/// (for ResNet-18, 61 MB less at the build's peak). Where no temporary file can be written, the model is serialised
/// in memory instead.
/// </summary>
internal static class SessionFiles
{
    /// <param name="directory">Where the file goes: the system's temporary folder unless given (tests).</param>
    public static InferenceSession Build(Action<Stream> write, SessionOptions options, string? directory = null)
    {
        ArgumentNullException.ThrowIfNull(write);
        FileStream file;
        try
        {
            file = Create(directory ?? Path.GetTempPath());
        }
        catch (Exception e) when (e is IOException or UnauthorizedAccessException)
        {
            return InMemory(write, options);
        }
        using (file)
        {
            try
            {
                write(file);
                file.Flush();
            }
            catch (IOException)
            {
                // A full disk, say: the same bytes from memory.
                return InMemory(write, options);
            }
            // The runtime reads the whole model while it builds the session; closing the file then removes it.
            return new InferenceSession(file.Name, options);
        }
    }

    private static FileStream Create(string directory)
    {
        var options = new FileStreamOptions
        {
            Mode = FileMode.CreateNew, Access = FileAccess.ReadWrite, Share = FileShare.Read,
            Options = FileOptions.DeleteOnClose, BufferSize = 1 << 16,
        };
        if (!OperatingSystem.IsWindows()) options.UnixCreateMode = UnixFileMode.UserRead | UnixFileMode.UserWrite;
        return new FileStream(Path.Combine(directory, $"auditsvc-session-{Guid.NewGuid():N}.onnx"), options);
    }

    private static InferenceSession InMemory(Action<Stream> write, SessionOptions options)
    {
        using var bytes = new MemoryStream();
        write(bytes);
        return new InferenceSession(bytes.ToArray(), options);
    }
}
