using AuditSvc.Api.Engine;
using AuditSvc.Compute.Activations;
using AuditSvc.Compute.Models;
using Compute = AuditSvc.Compute;

namespace AuditSvc.Api.Tests.Engine;

/// <summary>Chunk jobs reuse idle passes: one at a time, a failed run's pass is not reused, and idle ones are bounded in number and time.</summary>
public sealed class PassPoolTests
{
    private static readonly Lazy<LoadedModel> Loaded = new(() => Compute.Models.ModelIntake.Load(Path.Combine(RepoRoot(), "seed-demo", "models", "fruit-cue.onnx")));

    private static string RepoRoot()
    {
        var dir = new DirectoryInfo(AppContext.BaseDirectory);
        while (dir is not null && !File.Exists(Path.Combine(dir.FullName, "AuditSvc.sln"))) dir = dir.Parent;
        return dir?.FullName ?? throw new InvalidOperationException("AuditSvc.sln not found above the test binaries");
    }

    private static ActivationPass NewPass() => new(Loaded.Value.Plan, Loaded.Value.RewrittenModel, new PassOptions { BatchSize = 4 });

    private sealed class Clock : TimeProvider
    {
        public DateTimeOffset Now { get; set; } = new(2026, 12, 2, 12, 0, 0, TimeSpan.Zero);

        public override DateTimeOffset GetUtcNow() => Now;
    }

    [Fact]
    public void Use_OneAfterAnother_ReusesThePass_AndKeysApartStayApart()
    {
        using var pool = new PassPool();
        var first = pool.Use("m|1", NewPass, p => p);
        var second = pool.Use("m|1", NewPass, p => p);
        Assert.Same(first, second);
        var other = pool.Use("m|2", NewPass, p => p);
        Assert.NotSame(first, other);
        Assert.Equal((2, 2), (pool.Built, pool.Idle));
    }

    [Fact]
    public void Use_Concurrently_GivesEachRunItsOwnPass()
    {
        using var pool = new PassPool();
        using var inside = new Barrier(2);
        var passes = new ActivationPass[2];
        Parallel.For(0, 2, new ParallelOptions { MaxDegreeOfParallelism = 2 }, i => passes[i] = pool.Use("m", NewPass, p =>
        {
            // Both runs are inside at once: neither may have the other's pass.
            inside.SignalAndWait(TimeSpan.FromSeconds(30));
            return p;
        }));
        Assert.NotSame(passes[0], passes[1]);
        Assert.Equal((2, 2), (pool.Built, pool.Idle));
    }

    [Fact]
    public void Use_RunThatThrows_DropsItsPass()
    {
        using var pool = new PassPool();
        Assert.Throws<OperationCanceledException>(() => pool.Use<int>("m", NewPass, _ => throw new OperationCanceledException()));
        Assert.Equal(0, pool.Idle);
        pool.Use("m", NewPass, p => p);
        Assert.Equal(2, pool.Built);
    }

    [Fact]
    public void Idle_BoundedInNumberAndTime()
    {
        var clock = new Clock();
        using var pool = new PassPool(clock) { MaxIdle = 2, IdleLimit = TimeSpan.FromMinutes(2) };
        var a = pool.Use("a", NewPass, p => p);
        clock.Now += TimeSpan.FromMinutes(1);
        pool.Use("b", NewPass, p => p);
        pool.Use("c", NewPass, p => p);
        // Three models, two places: the longest idle ("a") went.
        Assert.Equal(2, pool.Idle);
        Assert.NotSame(a, pool.Use("a", NewPass, p => p));

        clock.Now += TimeSpan.FromMinutes(1.5);
        pool.Sweep();
        // "c" and the new "a" went idle a minute and a half ago: under the limit; three minutes later, over it.
        Assert.Equal(2, pool.Idle);
        clock.Now += TimeSpan.FromMinutes(3);
        pool.Sweep();
        Assert.Equal(0, pool.Idle);
    }
}
