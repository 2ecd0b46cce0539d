using System.Buffers.Binary;
using Google.Protobuf;
using Onnx;

namespace AuditSvc.Compute.Models;

/// <summary>
/// Moves float initializers written as repeated floats (field 'float_data') into 'raw_data', bit for bit (ONNX
/// stores raw_data little-endian). Protobuf copies a repeated field on every clone but shares a byte string, so the
/// intake's rewritten copies of the graph then share one copy of the weights instead of each holding its own.
/// </summary>
internal static class RawWeights
{
    public static void Pack(GraphProto graph)
    {
        foreach (var t in graph.Initializer)
        {
            if (t.DataType != (int)TensorProto.Types.DataType.Float || t.FloatData.Count == 0 || !t.RawData.IsEmpty) continue;
            var bytes = new byte[checked(t.FloatData.Count * sizeof(float))];
            int at = 0;
            foreach (float v in t.FloatData)
            {
                BinaryPrimitives.WriteSingleLittleEndian(bytes.AsSpan(at), v);
                at += sizeof(float);
            }
            // A cleared repeated field keeps its array unless its capacity goes too.
            t.FloatData.Clear();
            t.FloatData.Capacity = 0;
            t.RawData = UnsafeByteOperations.UnsafeWrap(bytes);
        }
    }
}
