namespace AuditSvc.Compute.Tests.Models;

/// <summary>A private folder per test, removed afterwards.</summary>
internal sealed class TempDir : IDisposable
{
    public string Path { get; } = Directory.CreateTempSubdirectory("auditsvc-model-").FullName;

    public string File(string name, string text)
    {
        string p = System.IO.Path.Combine(Path, name);
        System.IO.File.WriteAllText(p, text);
        return p;
    }

    public void Dispose()
    {
        try { Directory.Delete(Path, recursive: true); } catch (IOException) { }
    }
}
