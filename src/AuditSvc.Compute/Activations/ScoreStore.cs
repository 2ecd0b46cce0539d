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
    // Arrays of spilled blocks, handed to later blocks of the same length: once the store spills, the arrays it
    // allocated before are all it ever uses, so the large-object heap stops growing at the limit (plus open blocks).
    private readonly Stack<Half[]> _spare = [];
    private readonly string? _spillDir;
    private readonly object _gate = new();
    private readonly int _transposeBytes;
    private Half[]? _transposed;
    private long _memoryBytes;
    private bool _disposed;

    /// <param name="transposeBytes">
    /// Size of the one buffer a block is transposed through on its way to disk, a slice of units at a time (at least
    /// one unit's column of a block); small so that spilling allocates nothing in proportion to a block.
    /// </param>
    public ScoreStore(int items, int units, int rowsPerBlock = 4096, long memoryLimitBytes = 512L << 20, string? spillDir = null,
        int transposeBytes = 1 << 20)
    {
        ItemCount = items;
        UnitCount = units;
        RowsPerBlock = Math.Max(1, rowsPerBlock);
        MemoryLimitBytes = memoryLimitBytes;
        _spillDir = spillDir;
        _transposeBytes = Math.Max(2, transposeBytes);
    }

    /// <summary>Bytes of one full block (rows per block × units × 2).</summary>
    public long BlockBytes => (long)Math.Min(RowsPerBlock, Math.Max(1, ItemCount)) * UnitCount * 2;

    /// <summary>
    /// Most bytes of score arrays the store holds at once while spilling: the blocks that reach the limit, the block
    /// that passes it, and one more block begun before the finished ones are spilled (rows arrive in batches that may
    /// straddle two blocks), plus the transposition buffer. Without a spill folder the whole matrix stays.
    /// </summary>
    public long MostHeldBytes =>
        _spillDir is null
            ? (long)ItemCount * UnitCount * 2
            : Math.Min((long)ItemCount * UnitCount * 2, (Math.Max(0, MemoryLimitBytes) / Math.Max(1, BlockBytes) + 2) * BlockBytes) + _transposeBytes;

    public int ItemCount { get; }

    public int UnitCount { get; }

    public int RowsPerBlock { get; }

    public long MemoryLimitBytes { get; }

    public bool Spilled => _onDisk.Count > 0;

    /// <summary>Blocks written to the spill folder so far.</summary>
    public int SpilledBlocks => _onDisk.Count;

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
                long length = (long)rows * UnitCount;
                data = _spare.Count > 0 && _spare.Peek().LongLength == length ? _spare.Pop() : new Half[length];
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
            foreach (var block in _memory.Keys.Where(b => Math.Min((b + 1) * RowsPerBlock, ItemCount) <= completeBelowItem).Order().ToList())
            {
                var data = _memory[block];
                WriteUnitMajor(BlockPath(block), data, data.Length / UnitCount);
                _memory.Remove(block);
                _onDisk.Add(block);
                _memoryBytes -= data.Length * 2L;
                _spare.Push(data);
            }
        }
    }

    /// <summary>Writes a row-major block unit-major, through the one transposition buffer, a slice of units at a time.</summary>
    private void WriteUnitMajor(string path, Half[] data, int rows)
    {
        int unitsPerSlice = Math.Clamp(_transposeBytes / 2 / Math.Max(1, rows), 1, UnitCount);
        _transposed ??= new Half[(long)unitsPerSlice * RowsPerBlock];
        // Streamed (not File.WriteAllBytes): a full disk then reports its errno, which tells it apart from a bug.
        using var file = new FileStream(path, FileMode.Create, FileAccess.Write, FileShare.None, bufferSize: 0);
        for (int first = 0; first < UnitCount; first += unitsPerSlice)
        {
            int count = Math.Min(unitsPerSlice, UnitCount - first);
            var slice = _transposed.AsSpan(0, count * rows);
            for (int r = 0; r < rows; r++)
            {
                var row = data.AsSpan(r * UnitCount + first, count);
                for (int k = 0; k < count; k++) slice[k * rows + r] = row[k];
            }
            file.Write(MemoryMarshal.AsBytes(slice));
        }
    }

    /// <summary>
    /// Lets go of what only spilling needs (the spilled blocks' arrays kept for reuse, the transposition buffer);
    /// call once every row is written. Rows still in memory stay.
    /// </summary>
    public void ReleaseSpare()
    {
        lock (_gate)
        {
            _spare.Clear();
            _transposed = null;
        }
    }

    public void ReadUnits(int firstUnit, int count, Span<float> destination)
    {
        ObjectDisposedException.ThrowIf(_disposed, this);
        destination.Fill(float.NaN);
        int blocks = (ItemCount + RowsPerBlock - 1) / RowsPerBlock;
        // One pooled buffer for the spilled blocks' slices: the scan asks for 32 units at a time, thousands of times.
        Half[]? slice = Spilled ? System.Buffers.ArrayPool<Half>.Shared.Rent(count * RowsPerBlock) : null;
        try
        {
            for (int block = 0; block < blocks; block++) ReadBlockUnits(block, firstUnit, count, destination, slice);
        }
        finally
        {
            if (slice is not null) System.Buffers.ArrayPool<Half>.Shared.Return(slice);
        }
    }

    private void ReadBlockUnits(int block, int firstUnit, int count, Span<float> destination, Half[]? slice)
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
            return;
        }
        if (!_onDisk.Contains(block) || slice is null) return;
        // Unit-major on disk: the units asked for are one contiguous run of count × rows values.
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

    /// <summary>Copies rows [start, start + count) as stored (float16), row-major; rows never written are NaN.</summary>
    public void ReadRows(int start, int count, Span<Half> destination)
    {
        ObjectDisposedException.ThrowIf(_disposed, this);
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

    /// <summary>Lets go of the blocks in memory and deletes the spilled ones; reading afterwards throws.</summary>
    public void Dispose()
    {
        lock (_gate)
        {
            _disposed = true;
            _memory.Clear();
            _memoryBytes = 0;
            _spare.Clear();
            _transposed = null;
        }
        if (_spillDir is not null && Directory.Exists(_spillDir))
            foreach (var b in _onDisk) File.Delete(BlockPath(b));
    }
}
