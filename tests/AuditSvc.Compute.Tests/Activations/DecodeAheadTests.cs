using AuditSvc.Compute.Activations;

namespace AuditSvc.Compute.Tests.Activations;

/// <summary>Decoding runs ahead across batches, image by image, within a bound counted in images; batches come out whole and in order.</summary>
public class DecodeAheadTests
{
    private static PassBatch NewBatch(int b) => new(b, 1, 1);

    private static void Write(int j, PassBatch batch, int i)
    {
        batch.Items[i] = j;
        batch.Input[i] = j;
        batch.Ok[i] = true;
    }

    [Theory]
    [InlineData(1, 1, 1, 0)]
    [InlineData(1, 2, 8, 17)]
    [InlineData(3, 2, 4, 20)]
    [InlineData(8, 3, 16, 29)]
    [InlineData(4, 4, 5, 4)]
    public void Batches_AnyBatchThreadsAndBound_ComeWholeAndInOrder(int batchSize, int threads, int ahead, int count)
    {
        using var decode = new DecodeAhead(count, batchSize, threads, ahead, () => NewBatch(batchSize), Write, CancellationToken.None);
        int expected = 0;
        foreach (var batch in decode.Batches())
        {
            Assert.Equal(Math.Min(batchSize, count - expected), batch.Count);
            for (int i = 0; i < batch.Count; i++)
            {
                Assert.Equal(expected, batch.Items[i]);
                Assert.Equal(expected, batch.Input[i]);
                expected++;
            }
        }
        Assert.Equal(count, expected);
    }

    [Fact]
    public void Batches_BatchOfOne_TwoDecodersWorkAtOnce()
    {
        // Each decode waits until the other decoder is decoding too: with one image per batch this only finishes
        // when decoding is not capped by the batch size. The barrier's timeout turns a deadlock into a failure.
        using var both = new Barrier(2);
        bool met = true;
        using var decode = new DecodeAhead(8, 1, 2, 4, () => NewBatch(1), (j, batch, i) =>
        {
            if (!both.SignalAndWait(TimeSpan.FromSeconds(30))) met = false;
            Write(j, batch, i);
        }, CancellationToken.None);
        Assert.Equal(8, decode.Batches().Count());
        Assert.True(met, "the two decoders never decoded at the same time");
    }

    [Fact]
    public void Batches_SlowConsumer_DecodersStopAtTheBoundInImages()
    {
        int started = 0;
        using var decode = new DecodeAhead(100, 2, 4, 6, () => NewBatch(2), (j, batch, i) =>
        {
            Interlocked.Increment(ref started);
            Write(j, batch, i);
        }, CancellationToken.None);
        int consumed = 0, maxAhead = 0;
        foreach (var batch in decode.Batches())
        {
            // Give the decoders every chance to run past the bound while this batch is held.
            Thread.Sleep(5);
            maxAhead = Math.Max(maxAhead, Volatile.Read(ref started) - consumed);
            consumed += batch.Count;
        }
        Assert.Equal(100, consumed);
        Assert.InRange(maxAhead, 1, 6);
    }

    [Fact]
    public void Batches_DecoderThrows_TheErrorReachesTheConsumer()
    {
        using var decode = new DecodeAhead(10, 2, 2, 4, () => NewBatch(2), (j, batch, i) =>
        {
            if (j == 5) throw new InvalidOperationException("decoder broke on 5");
            Write(j, batch, i);
        }, CancellationToken.None);
        var e = Assert.Throws<InvalidOperationException>(() => decode.Batches().ToList());
        Assert.Equal("decoder broke on 5", e.Message);
    }

    [Fact]
    public void Batches_Cancelled_StopsWithCancellation()
    {
        using var cts = new CancellationTokenSource();
        using var decode = new DecodeAhead(1000, 2, 2, 4, () => NewBatch(2), Write, cts.Token);
        Assert.ThrowsAny<OperationCanceledException>(() =>
        {
            foreach (var _ in decode.Batches()) cts.Cancel();
        });
    }

    [Fact]
    public void Resolve_SmallBatch_DecodesAheadFourImagesPerThreadWithinSixtyFourMegabytes()
    {
        // 1024×1024×3 floats (12 MB a slot): batch 1; 4 images per decode thread would be 96 MB, so 5 (64 MB) stand.
        var large = new PassOptions().Resolve(3 * 1024 * 1024, cores: 2);
        Assert.Equal(1, large.BatchSize);
        Assert.Equal(5, large.DecodeAheadImages);
        // 224×224: batch 8, two batches ahead (16) exceed 4 per thread (8).
        Assert.Equal(16, new PassOptions().Resolve(3 * 224 * 224, cores: 2).DecodeAheadImages);
        Assert.Equal(8, new PassOptions { BatchSize = 1 }.Resolve(3 * 224 * 224, cores: 2).DecodeAheadImages);
        Assert.Equal(3, new PassOptions { DecodeAheadImages = 3 }.Resolve(12, 2).DecodeAheadImages);
    }
}
