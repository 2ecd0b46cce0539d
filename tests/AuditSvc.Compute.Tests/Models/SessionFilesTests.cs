using AuditSvc.Compute.Models;
using Microsoft.ML.OnnxRuntime;

namespace AuditSvc.Compute.Tests.Models;

/// <summary>Sessions built from a temporary file: the same model as from memory, and no file left behind.</summary>
public class SessionFilesTests
{
    private static readonly string Model = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    [Fact]
    public void Build_FromAFile_LeavesNoFileAndRunsAsFromMemory()
    {
        using var dir = new TempDir();
        var bytes = File.ReadAllBytes(Model);
        using var options = new SessionOptions { IntraOpNumThreads = 1 };
        using (var fromFile = SessionFiles.Build(s => s.Write(bytes), options, dir.Path))
        using (var fromMemory = new InferenceSession(bytes, options))
        {
            Assert.Empty(Directory.GetFiles(dir.Path));
            Assert.Equal(fromMemory.OutputNames, fromFile.OutputNames);
            Assert.Equal(Outputs(fromMemory), Outputs(fromFile));
        }
    }

    [Fact]
    public void Build_NoWritableFolder_BuildsFromMemory()
    {
        using var dir = new TempDir();
        var bytes = File.ReadAllBytes(Model);
        using var options = new SessionOptions { IntraOpNumThreads = 1 };
        using var session = SessionFiles.Build(s => s.Write(bytes), options, Path.Combine(dir.Path, "missing"));
        Assert.NotEmpty(Outputs(session));
    }

    private static float[] Outputs(InferenceSession session)
    {
        var input = session.InputMetadata.First();
        long[] shape = input.Value.Dimensions.Select(d => (long)Math.Max(1, d)).ToArray();
        var data = OrtRunner.Noise(shape, seed: 4).Data;
        using var value = OrtValue.CreateTensorValueFromMemory(data, shape);
        using var run = new RunOptions();
        using var results = session.Run(run, [input.Key], [value], [session.OutputNames[0]]);
        return results[0].GetTensorDataAsSpan<float>().ToArray();
    }
}
