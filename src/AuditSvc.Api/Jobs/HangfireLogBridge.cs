using Hangfire.Logging;
using Microsoft.Extensions.Hosting;
using Microsoft.Extensions.Logging;
using HangfireLevel = Hangfire.Logging.LogLevel;
using MsLevel = Microsoft.Extensions.Logging.LogLevel;

namespace AuditSvc.Api.Jobs;

/// <summary>
/// Hangfire's logging is process-wide (static), while logger factories belong to hosts. Hangfire would keep
/// the first host's factory after that host is gone; this bridge forwards to whichever host is running now
/// and drops messages when none is, so a process may start and stop hosts (tests, CLI) safely.
/// </summary>
internal sealed class HangfireLogBridge : ILogProvider
{
    public static readonly HangfireLogBridge Instance = new();
    private static ILoggerFactory? _current;

    public ILog GetLogger(string name) => new Forwarder(name);

    private sealed class Forwarder(string name) : ILog
    {
        public bool Log(HangfireLevel logLevel, Func<string>? messageFunc, Exception? exception = null)
        {
            var factory = Volatile.Read(ref _current);
            if (factory is null) return false;
            try
            {
                var logger = factory.CreateLogger(name);
                var level = Map(logLevel);
                if (messageFunc is null) return logger.IsEnabled(level);
                if (!logger.IsEnabled(level)) return false;
#pragma warning disable CA1848, CA2254 // Hangfire hands over finished text; there is no template to cache
                logger.Log(level, exception, messageFunc());
#pragma warning restore CA1848, CA2254
                return true;
            }
            catch (ObjectDisposedException)
            {
                return false; // the host is stopping
            }
        }
    }

    private static MsLevel Map(HangfireLevel level) => level switch
    {
        HangfireLevel.Trace => MsLevel.Trace,
        HangfireLevel.Debug => MsLevel.Debug,
        HangfireLevel.Info => MsLevel.Information,
        HangfireLevel.Warn => MsLevel.Warning,
        HangfireLevel.Error => MsLevel.Error,
        _ => MsLevel.Critical,
    };

    /// <summary>Points the bridge at this host's loggers while it runs.</summary>
    internal sealed class Attach(ILoggerFactory factory) : IHostedService
    {
        public Task StartAsync(CancellationToken cancellationToken)
        {
            Volatile.Write(ref _current, factory);
            return Task.CompletedTask;
        }

        public Task StopAsync(CancellationToken cancellationToken)
        {
            Interlocked.CompareExchange(ref _current, null, factory);
            return Task.CompletedTask;
        }
    }
}
