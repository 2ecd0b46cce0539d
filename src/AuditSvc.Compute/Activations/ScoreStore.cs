using System.Runtime.InteropServices;
using AuditSvc.Core.Activations;

namespace AuditSvc.Compute.Activations;

/// <summary>
/// The scores matrix (images × units) in float16, in blocks of rows. Blocks stay in memory, row-major, until the
/// matrix passes <see cref="MemoryLimitBytes"/>; then every finished block is transposed once and written unit-major
/// to a file in the spill folder, so memory stays bounded as the set grows and reading a range of units (what the
/// association scan does, 32 units at a time) reads just those units' bytes from each file, not the whole file.
/// </summary>
public sealed class ScoreStore : IUnitScores, IDisposable
{
    private readonly Dictionary<int, Half[]> _memory = [];
    private readonly HashSet<int> _onDisk = [];
    private readonly string? _spillDir;
    private readonly object _gate = new();
    private long _memoryBytes;

    public ScoreStore(int items, int units, int rowsPerBlock = 4096, long memoryLimitBytes = 512L << 20, string? spillDir = null)
    {
        ItemCount = items;
        UnitCount = units;
        RowsPerBlock = Math.Max(1, rowsPerBlock);
        MemoryLimitBytes = memoryLimitBytes;
        _spillDir = spillDir;
    }

    public int ItemCount { get; }

    public int UnitCount { get; }

    public int RowsPerBlock { get; }

    public long MemoryLimitBytes { get; }

    public bool Spilled => _onDisk.Count > 0;

    /// <summary>Writes one image's scores (length <see cref="UnitCount"/>). Thread-safe across rows.</summary>
    public void WriteRow(int item, ReadOnlySpan<float> scores)
    {
        int block = item / RowsPerBlock;
        Half[] data;
        lock (_gate)
        {
            if (!_memory.TryGetValue(block, out data!))
            {
                int rows = Math.Min(RowsPerBlock, ItemCount - block * RowsPerBlock);
                data = new Half[(long)rows * UnitCount];
                data.AsSpan().Fill(Half.NaN);
                _memory[block] = data;
                _memoryBytes += data.Length * 2L;
            }
        }
        var row = data.AsSpan((item - block * RowsPerBlock) * UnitCount, UnitCount);
        for (int u = 0; u < row.Length; u++) row[u] = (Half)scores[u];
    }

    /// <summary>Moves finished blocks to disk while memory is over the limit (call between batches).</summary>
    public void SpillIfNeeded(int completeBelowItem)
    {
        if (_spillDir is null) return;
        lock (_gate)
        {
            if (_memoryBytes <= MemoryLimitBytes) return;
            Directory.CreateDirectory(_spillDir);
            // The last block is shorter than the others: it is complete once the items end.
            foreach (var block in _memory.Keys.Where(b => Math.Min((b + 1) * RowsPerBlock, ItemCount) <= completeBelowItem).ToList())
            {
                var data = _memory[block];
                int rows = data.Length / UnitCount;
                var byUnit = new Half[data.Length];
                for (int r = 0; r < rows; r++)
                    for (int u = 0; u < UnitCount; u++) byUnit[(long)u * rows + r] = data[(long)r * UnitCount + u];
                File.WriteAllBytes(BlockPath(block), MemoryMarshal.AsBytes(byUnit.AsSpan()));
                _memory.Remove(block);
                _onDisk.Add(block);
                _memoryBytes -= data.Length * 2L;
            }
        }
    }

    public void ReadUnits(int firstUnit, int count, Span<float> destination)
    {
        destination.Fill(float.NaN);
        int blocks = (ItemCount + RowsPerBlock - 1) / RowsPerBlock;
        Half[]? slice = null;
        for (int block = 0; block < blocks; block++)
        {
            int start = block * RowsPerBlock, rows = Math.Min(RowsPerBlock, ItemCount - start);
            Half[]? data;
            lock (_gate) _memory.TryGetValue(block, out data);
            if (data is not null)
            {
                for (int r = 0; r < rows; r++)
                {
                    var row = data.AsSpan(r * UnitCount + firstUnit, count);
                    for (int k = 0; k < count; k++) destination[k * ItemCount + start + r] = (float)row[k];
                }
                continue;
            }
            if (!_onDisk.Contains(block)) continue;
            // Unit-major on disk: the units asked for are one contiguous run of count × rows values.
            slice ??= new Half[(long)count * RowsPerBlock];
            var span = slice.AsSpan(0, count * rows);
            using (var file = File.OpenHandle(BlockPath(block), FileMode.Open, FileAccess.Read, FileShare.Read, FileOptions.RandomAccess))
                RandomAccess.Read(file, MemoryMarshal.AsBytes(span), (long)firstUnit * rows * 2);
            for (int k = 0; k < count; k++)
            {
                var values = span.Slice(k * rows, rows);
                var target = destination.Slice(k * ItemCount + start, rows);
                for (int r = 0; r < rows; r++) target[r] = (float)values[r];
            }
        }
    }

    /// <summary>Copies rows [start, start + count) as stored (float16), row-major; rows never written are NaN.</summary>
    public void ReadRows(int start, int count, Span<Half> destination)
    {
        destination.Fill(Half.NaN);
        for (int item = start; item < start + count;)
        {
            int block = item / RowsPerBlock, blockStart = block * RowsPerBlock;
            int rowsHere = Math.Min(start + count, Math.Min(ItemCount, blockStart + RowsPerBlock)) - item;
            Half[]? data;
            lock (_gate) _memory.TryGetValue(block, out data);
            if (data is not null)
                data.AsSpan((item - blockStart) * UnitCount, rowsHere * UnitCount).CopyTo(destination.Slice((item - start) * UnitCount));
            else if (_onDisk.Contains(block))
            {
                var byUnit = MemoryMarshal.Cast<byte, Half>(File.ReadAllBytes(BlockPath(block)));
                int rows = byUnit.Length / UnitCount;
                for (int r = 0; r < rowsHere; r++)
                    for (int u = 0; u < UnitCount; u++)
                        destination[(item - start + r) * UnitCount + u] = byUnit[u * rows + item - blockStart + r];
            }
            item += rowsHere;
        }
    }

    private string BlockPath(int block) => Path.Combine(_spillDir!, $"scores-{block:D6}.f16");

    public void Dispose()
    {
        if (_spillDir is not null && Directory.Exists(_spillDir))
            foreach (var b in _onDisk) File.Delete(BlockPath(b));
    }
}
