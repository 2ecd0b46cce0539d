using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Audits;
using AuditSvc.Compute.Models;
using AuditSvc.Core.Activations;
using Xunit.Abstractions;

namespace AuditSvc.Compute.Tests.Activations;

/// <summary>Chunk format 2 (compact peaks) keeps every peak bit for bit; format 1 still reads; the merge holds one chunk at a time.</summary>
public class ChunkFormatTests(ITestOutputHelper output)
{
    private static readonly string Model = Path.Combine(AppContext.BaseDirectory, "demo-models", "fruit-cue.onnx");

    [Fact]
    public void Write_AwkwardScoresAndPlaces_ReadBackBitForBit()
    {
        // Scores the float16 matrix cannot hold (overflow, below its smallest step, negative zero, NaN in the matrix)
        // and a place of -1: the peak's float32 must come back exactly whatever the float16 beside it says.
        float[] awkward = [1.2345678f, -3.5e-7f, 70000f, float.PositiveInfinity, -0.0f, 1e-30f, float.MaxValue, 0.1f, -65504.5f, 3f];
        const int start = 40, count = 10, units = 3;
        var scores = new Half[count * units];
        var top = new Peak[units][];
        for (int u = 0; u < units; u++)
        {
            var peaks = new List<Peak>();
            for (int i = 0; i < count; i++)
            {
                float s = awkward[(i + u) % count] * (u + 1);
                scores[i * units + u] = u == 2 && i == 4 ? Half.NaN : (Half)s;
                if ((i + u) % 3 != 1) peaks.Add(new Peak(start + i, s, (short)(u == 1 ? -1 : i * 7), (short)(300 - i)));
            }
            top[u] = u == 0 ? [] : peaks.ToArray();
        }
        var chunk = new ChunkResult(start, count, units, 8, 2, scores, top, Enumerable.Repeat(true, count).ToArray(),
            Enumerable.Range(0, count).Select(i => i % 2).ToArray(), Enumerable.Range(0, count * 2).Select(i => i / 20f).ToArray(),
            [new PassProblem(start + 3, "a.png", "not a decodable image")]);

        var back = RoundTrip(chunk);

        for (int u = 0; u < units; u++)
            Assert.Equal(top[u].OrderBy(p => p.Item).Select(Bits), back.Top[u].Select(Bits));
        Assert.Equal(chunk.Scores, back.Scores);
        Assert.Equal(chunk.Probabilities, back.Probabilities);
        Assert.Equal(chunk.Problems, back.Problems);
    }

    [Fact]
    public void Read_Format1Chunk_SamePeaksAsFormat2()
    {
        var chunk = DemoChunk(0, 60);
        using var old = new MemoryStream();
        WriteFormat1(old, chunk);
        old.Position = 0;

        var fromOld = ChunkResult.Read(old);
        var fromNew = RoundTrip(chunk);

        for (int u = 0; u < chunk.Units; u++)
            Assert.Equal(fromOld.Top[u].OrderBy(p => p.Item).Select(Bits), fromNew.Top[u].Select(Bits));
        Assert.Equal(fromOld.Scores, fromNew.Scores);
    }

    [Fact]
    public void Read_UnknownFormat_RefusedNamingIt()
    {
        using var ms = new MemoryStream();
        DemoChunk(0, 10).Write(ms);
        var bytes = ms.ToArray();
        BitConverter.GetBytes(7).CopyTo(bytes, 4);

        var e = Assert.Throws<InvalidDataException>(() => ChunkResult.Read(new MemoryStream(bytes)));
        Assert.Contains("format 7", e.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Write_TwoPeaksOnOneItem_RefusedInEitherLayout()
    {
        // Few peaks are written as gaps, many as a bitmap; a repeated item would be lost in a bitmap, so both refuse it.
        foreach (var peaks in new[] { 2, 9 })
        {
            var top = Enumerable.Range(0, peaks).Select(i => new Peak(Math.Max(0, i - 1), 1f, 0, 0)).ToArray();
            var chunk = new ChunkResult(0, 10, 1, 10, 1, new Half[10], [top], new bool[10], new int[10], new float[10], []);

            var e = Assert.Throws<InvalidDataException>(() => chunk.Write(new MemoryStream()));
            Assert.Contains("two peaks on item 0", e.Message, StringComparison.Ordinal);
        }
    }

    [Fact]
    public void Write_DemoModelChunk_PeaksTakeLessThanHalfOfFormat1()
    {
        // A 256-item chunk of a 3,000-image audit (top-n 60) and of a 20,000-image one (top-n 250, nearly every item is
        // among each unit's peaks).
        foreach (var n in new[] { TopN.DefaultN(3_000), TopN.DefaultN(20_000) }) MeasureChunk(DemoChunk(0, 256, topN: n));
    }

    private void MeasureChunk(ChunkResult chunk)
    {
        using var v1 = new MemoryStream();
        WriteFormat1(v1, chunk);
        using var v2 = new MemoryStream();
        chunk.Write(v2);
        long peaks = chunk.Top.Sum(t => (long)t.Length);
        long peakBytes1 = peaks * 12 + chunk.Units * 4L; // format 1: a count per unit, 12 bytes per peak
        long rest = v1.Length - peakBytes1;               // header, scores, predictions, problems: the same in both
        long peakBytes2 = v2.Length - rest;
        output.WriteLine($"chunk of {chunk.Count} items × {chunk.Units} units, {peaks} peaks (top-n {chunk.TopN}); float16 scores {chunk.Scores.Length * 2} bytes");
        output.WriteLine($"format 1: {v1.Length} bytes ({peakBytes1} of peaks); format 2: {v2.Length} bytes ({peakBytes2} of peaks, {(double)peakBytes2 / peaks:F2} per peak)");

        Assert.True(peakBytes2 * 2 < peakBytes1, $"format 2 peaks take {peakBytes2} bytes against {peakBytes1}");
    }

    [Fact]
    public void Add_ChunkFolded_IsNotKeptByTheMerger()
    {
        using var merger = new ChunkMerger([], 60, new PassOptions());
        var gone = AddAndForget(merger, 0);
        merger.Add(DemoChunk(30, 30));
        GC.Collect();
        GC.WaitForPendingFinalizers();
        GC.Collect();

        Assert.False(gone.TryGetTarget(out _), "the merger still holds a chunk it has folded");
        using var act = (ScoreStore)merger.Finish().Scores;
    }

    [Fact]
    public void Add_ChunkOutOfOrderOrOverlapping_Refused()
    {
        using var merger = new ChunkMerger([], 60, new PassOptions());
        merger.Add(DemoChunk(0, 30));

        Assert.Throws<InvalidDataException>(() => merger.Add(DemoChunk(40, 20)));
        Assert.Throws<InvalidDataException>(() => merger.Add(DemoChunk(20, 20)));
        Assert.Throws<InvalidDataException>(() => merger.Finish());
    }

    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.NoInlining)]
    private static WeakReference<ChunkResult> AddAndForget(ChunkMerger merger, int start)
    {
        var chunk = DemoChunk(start, 30);
        merger.Add(chunk);
        return new WeakReference<ChunkResult>(chunk);
    }

    private static (int, int, short, short) Bits(Peak p) => (p.Item, BitConverter.SingleToInt32Bits(p.Score), p.Y, p.X);

    private static ChunkResult RoundTrip(ChunkResult chunk)
    {
        using var ms = new MemoryStream();
        chunk.Write(ms);
        ms.Position = 0;
        return ChunkResult.Read(ms);
    }

    private static readonly Lazy<(LoadedModel Model, AuditSvc.Core.ImageSets.ItemTable Table)> Demo = new(() =>
    {
        var dir = Path.Combine(Path.GetTempPath(), "auditsvc-format-" + Guid.NewGuid().ToString("N"));
        var table = ChunkResultTests.WriteSet(dir);
        // 90 pictures stand for many: items past 90 reuse them in turn.
        var items = Enumerable.Range(0, 256).Select(i => table.Items[i % 90] with { Index = i }).ToList();
        return (ModelIntake.Load(Model), table with { Items = items });
    });

    private static ChunkResult DemoChunk(int start, int count, int topN = 20) =>
        AuditPipeline.RunChunk(Demo.Value.Model, Demo.Value.Table, start, count, new PassOptions { BatchSize = 32, TopN = topN });

    // Format 1 as it was written before compact peaks: kept here, independent of the reader, so old chunks stay readable.
    private static void WriteFormat1(Stream stream, ChunkResult c)
    {
        using var w = new BinaryWriter(stream, System.Text.Encoding.UTF8, leaveOpen: true);
        w.Write(0x4B485541); w.Write(1);
        w.Write(c.Start); w.Write(c.Count); w.Write(c.Units); w.Write(c.TopN); w.Write(c.ClassCount);
        foreach (var h in c.Scores) w.Write(h);
        foreach (var peaks in c.Top)
        {
            w.Write(peaks.Length);
            foreach (var p in peaks) { w.Write(p.Item); w.Write(p.Score); w.Write(p.Y); w.Write(p.X); }
        }
        foreach (var s in c.Scored) w.Write(s);
        foreach (var p in c.Predicted) w.Write(p);
        foreach (var p in c.Probabilities) w.Write(p);
        w.Write(c.Problems.Count);
        foreach (var p in c.Problems) { w.Write(p.Item); w.Write(p.File); w.Write(p.Reason); }
    }
}
