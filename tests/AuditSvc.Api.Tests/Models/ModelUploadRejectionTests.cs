using System.Net;
using AuditSvc.Api.Tests.Hosting;
using AuditSvc.Cli.Commands;
using AuditSvc.Data.Tests;
using Google.Protobuf;
using Onnx;

namespace AuditSvc.Api.Tests.Models;

/// <summary>
/// A refused model upload leaves nothing new under the artifact root, whatever refused it: not ONNX, a refused input
/// shape, a malformed recipe, a name too long, or a file past the upload limit. An earlier model stored from the same
/// bytes stays.
/// </summary>
public class ModelUploadRejectionTests
{
    private static byte[] DemoModel() => File.ReadAllBytes(DemoCommand.FindModel("fruit-cue.onnx"));

    private static byte[] WithInput(long h, long w)
    {
        var m = ModelProto.Parser.ParseFrom(DemoModel());
        var dims = m.Graph.Input[0].Type.TensorType.Shape.Dim;
        dims[2].DimValue = h;
        dims[3].DimValue = w;
        return m.ToByteArray();
    }

    public static TheoryData<string, int> Kinds => new()
    {
        { "not-onnx", 400 },
        { "refused-shape", 400 },
        { "bad-recipe", 400 },
        { "long-name", 400 },
        { "too-large", 413 },
    };

    [PgTheory]
    [MemberData(nameof(Kinds))]
    public async Task Upload_RefusedModel_LeavesNothingBehind(string kind, int expected)
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0, realEngine: true,
            settings: kind == "too-large" ? new Dictionary<string, string?> { ["AUDITSVC_MAX_UPLOAD_BYTES"] = "4096" } : null);
        using var client = await svc.ClientAsync("team-a");
        var (bytes, recipe, name) = kind switch
        {
            "not-onnx" => (Enumerable.Range(0, 4096).Select(i => (byte)(i * 7919 % 251)).ToArray(), (string?)null, "m"),
            "refused-shape" => (WithInput(4000, 4000), null, "m"),
            "bad-recipe" => (DemoModel(), "{\"width\": ", "m"),
            "long-name" => (DemoModel(), null, new string('n', 201)),
            "too-large" => (DemoModel(), null, "m"),
            _ => throw new ArgumentOutOfRangeException(nameof(kind)),
        };

        var response = await Uploads.PostModelAsync(client, bytes, recipe, name);

        Assert.Equal(expected, (int)response.StatusCode);
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType!.MediaType);
        AssertNothingStored(svc.DataRoot);
    }

    [PgFact]
    public async Task Upload_RefusedAfterAnAcceptedUploadOfTheSameFile_KeepsTheStoredModel()
    {
        await using var svc = await ServiceUnderTest.StartAsync(workers: 0, realEngine: true);
        using var client = await svc.ClientAsync("team-a");
        Assert.Equal(HttpStatusCode.Created, (await Uploads.PostModelAsync(client, DemoModel(), null, "kept")).StatusCode);
        var before = Files(svc.DataRoot);

        Assert.Equal(HttpStatusCode.BadRequest, (await Uploads.PostModelAsync(client, DemoModel(), null, new string('n', 201))).StatusCode);
        Assert.Equal(HttpStatusCode.BadRequest, (await Uploads.PostModelAsync(client, DemoModel(), "{\"mean\": \"x\"}", "other recipe")).StatusCode);

        Assert.Equal(before, Files(svc.DataRoot));
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/api/models")).StatusCode);
    }

    // What an upload may create: files (and links) under blobs, models and scratch, and (model, recipe) folders.
    // Locks and keys are not the upload's.
    private static List<string> Files(string root)
    {
        var found = new List<string>();
        foreach (var dir in new[] { "blobs", "models", "scratch" }.Select(f => Path.Combine(root, f)).Where(Directory.Exists))
            found.AddRange(Directory.GetFiles(dir, "*", SearchOption.AllDirectories));
        if (Directory.Exists(Path.Combine(root, "models"))) found.AddRange(Directory.GetDirectories(Path.Combine(root, "models")));
        return found.Select(p => Path.GetRelativePath(root, p)).Order(StringComparer.Ordinal).ToList();
    }

    private static void AssertNothingStored(string root)
    {
        var left = Files(root);
        Assert.True(left.Count == 0, "left under the artifact root: " + string.Join(", ", left));
    }
}
