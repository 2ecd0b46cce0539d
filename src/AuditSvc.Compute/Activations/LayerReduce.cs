using AuditSvc.Core.Activations;
using Microsoft.ML.OnnxRuntime;

namespace AuditSvc.Compute.Activations;

/// <summary>
/// Reduces one read layer's output for a run of images to unit scores and peaks (the channel maxima and where they
/// sit), written into a batch's rows. The parallel variant splits the planes across cores; it runs while ONNX
/// Runtime's own threads are idle between model runs, so the reduce does not hold the other cores back.
/// Both variants call <see cref="ChannelMax.Find"/> on the same planes, so their results are identical.
/// </summary>
internal static class LayerReduce
{
    /// <summary>Planes per parallel work item: small enough to spread, large enough to amortise the hand-off.</summary>
    private const int MinFloatsPerTask = 1 << 15;

    public static void Run(LayerSlice slice, OrtValue value, int count, int offset, int units,
        float[] scores, short[] peakY, short[] peakX, bool parallel)
    {
        var info = slice.Layer;
        int c = info.Channels;
        int plane = checked((int)(value.GetTensorTypeAndShape().ElementCount / ((long)count * c)));
        int w = info.Rank == 2 ? 1 : info.Width;
        int planes = count * c;
        int perTask = Math.Max(1, MinFloatsPerTask / Math.Max(1, plane));
        int tasks = (planes + perTask - 1) / perTask;
        if (!parallel || tasks < 2)
        {
            Planes(value.GetTensorDataAsSpan<float>(), 0, planes, plane, c, w, offset, units, slice.FirstUnit, scores, peakY, peakX);
            return;
        }
        Parallel.For(0, tasks, t =>
        {
            int from = t * perTask, to = Math.Min(planes, from + perTask);
            Planes(value.GetTensorDataAsSpan<float>(), from, to, plane, c, w, offset, units, slice.FirstUnit, scores, peakY, peakX);
        });
    }

    /// <summary>
    /// Copies in-graph maxima and first arg-maxima (int64) of [count, C] planes into the batch's rows. Positions of
    /// rank 3 ([count, C, 1], ArgMax) are within the plane; of rank 4 ([count, C, 1, 1], MaxPool's Indices) they
    /// are flattened over the whole [count, C, H, W] tensor, and an index outside its plane (a plane with no
    /// number in it) is read as position 0.
    /// </summary>
    public static void FromGraph(LayerSlice slice, OrtValue max, OrtValue argMax, int count, int offset, int units,
        float[] scores, short[] peakY, short[] peakX)
    {
        int c = slice.Layer.Channels, w = slice.Layer.Width;
        long plane = (long)slice.Layer.Height * w;
        bool flattened = argMax.GetTensorTypeAndShape().Shape.Length == 4;
        var m = max.GetTensorDataAsSpan<float>();
        var a = argMax.GetTensorDataAsSpan<long>();
        for (int i = 0; i < count; i++)
        {
            int at = (offset + i) * units + slice.FirstUnit;
            m.Slice(i * c, c).CopyTo(scores.AsSpan(at, c));
            for (int ch = 0; ch < c; ch++)
            {
                long index = a[i * c + ch];
                if (flattened)
                {
                    index -= (long)(i * c + ch) * plane;
                    if (index < 0 || index >= plane) index = 0;
                }
                peakY[at + ch] = (short)(index / w);
                peakX[at + ch] = (short)(index % w);
            }
        }
    }

    /// <summary>Planes [from, to) of the layer, plane p being image p / c, channel p % c.</summary>
    private static void Planes(ReadOnlySpan<float> data, int from, int to, int plane, int c, int w, int offset, int units, int firstUnit,
        float[] scores, short[] peakY, short[] peakX)
    {
        for (int p = from; p < to; p++)
        {
            int image = p / c, ch = p % c;
            int at = (offset + image) * units + firstUnit + ch;
            var (max, index) = ChannelMax.Find(data.Slice(p * plane, plane));
            scores[at] = max;
            peakY[at] = (short)(index / w);
            peakX[at] = (short)(index % w);
        }
    }
}
