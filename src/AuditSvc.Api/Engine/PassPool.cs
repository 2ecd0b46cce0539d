using AuditSvc.Compute.Activations;

namespace AuditSvc.Api.Engine;

/// <summary>
/// Idle activation passes of a worker, kept between chunk jobs. A worker runs many chunks of the same model one after
/// another, and each used to build its pass's ONNX Runtime session anew: about 3 s for ResNet-18, as long as the
/// inference of a 256-image chunk. A pass is taken by one chunk at a time (a pass is not run concurrently) and handed
/// back after a run that ended normally; at most <see cref="MaxIdle"/> wait, the longest idle going first, and a pass
/// idle for <see cref="IdleLimit"/> is dropped, so an idle worker gives the sessions' memory back.
/// </summary>
internal sealed class PassPool : IDisposable
{
    private readonly object _gate = new();
    private readonly List<(string Key, ActivationPass Pass, DateTime IdleSince)> _idle = [];
    private readonly Timer _sweep;
    private readonly TimeProvider _time;
    private bool _disposed;
    private int _built;

    public PassPool(TimeProvider? time = null)
    {
        _time = time ?? TimeProvider.System;
        _sweep = new Timer(_ => Sweep(), null, TimeSpan.FromSeconds(30), TimeSpan.FromSeconds(30));
    }

    /// <summary>Most passes kept idle, over all models.</summary>
    public int MaxIdle { get; init; } = 4;

    /// <summary>How long a pass may wait for its next chunk before it is dropped.</summary>
    public TimeSpan IdleLimit { get; init; } = TimeSpan.FromMinutes(2);

    /// <summary>Passes built so far (tests).</summary>
    public int Built => Volatile.Read(ref _built);

    /// <summary>Passes waiting (tests).</summary>
    public int Idle
    {
        get
        {
            lock (_gate) return _idle.Count;
        }
    }

    /// <summary>Runs <paramref name="run"/> on an idle pass for <paramref name="key"/>, or on one <paramref name="build"/> makes.</summary>
    public T Use<T>(string key, Func<ActivationPass> build, Func<ActivationPass, T> run)
    {
        ArgumentNullException.ThrowIfNull(build);
        ArgumentNullException.ThrowIfNull(run);
        var pass = Take(key);
        if (pass is null)
        {
            pass = build();
            Interlocked.Increment(ref _built);
        }
        T result;
        try
        {
            result = run(pass);
        }
        catch
        {
            // A run that failed or was cancelled may have left the pass in any state: it is not reused.
            pass.Dispose();
            throw;
        }
        Return(key, pass);
        return result;
    }

    private ActivationPass? Take(string key)
    {
        lock (_gate)
        {
            // The most recently used first: its pages are the likeliest to be resident.
            for (int i = _idle.Count - 1; i >= 0; i--)
            {
                if (_idle[i].Key != key) continue;
                var pass = _idle[i].Pass;
                _idle.RemoveAt(i);
                return pass;
            }
        }
        return null;
    }

    private void Return(string key, ActivationPass pass)
    {
        var drop = new List<ActivationPass>();
        lock (_gate)
        {
            if (_disposed) drop.Add(pass);
            else
            {
                _idle.Add((key, pass, _time.GetUtcNow().UtcDateTime));
                while (_idle.Count > MaxIdle)
                {
                    drop.Add(_idle[0].Pass);
                    _idle.RemoveAt(0);
                }
            }
        }
        foreach (var p in drop) p.Dispose();
    }

    /// <summary>Drops the passes idle for longer than <see cref="IdleLimit"/> (the timer calls it every 30 s).</summary>
    public void Sweep()
    {
        var drop = new List<ActivationPass>();
        var now = _time.GetUtcNow().UtcDateTime;
        lock (_gate)
        {
            for (int i = _idle.Count - 1; i >= 0; i--)
            {
                if (now - _idle[i].IdleSince < IdleLimit) continue;
                drop.Add(_idle[i].Pass);
                _idle.RemoveAt(i);
            }
        }
        foreach (var p in drop) p.Dispose();
    }

    public void Dispose()
    {
        _sweep.Dispose();
        List<ActivationPass> drop;
        lock (_gate)
        {
            _disposed = true;
            drop = _idle.Select(e => e.Pass).ToList();
            _idle.Clear();
        }
        foreach (var p in drop) p.Dispose();
    }
}
