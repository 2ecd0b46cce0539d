using System.Collections.Concurrent;
using Microsoft.Extensions.Logging;

namespace AuditSvc.Api.Tests.Security;

/// <summary>Every log line a host writes, with its exception text, kept in memory for tests that read them.</summary>
public sealed class CapturedLogs : ILoggerProvider
{
    private readonly ConcurrentQueue<string> _lines = new();

    public IReadOnlyCollection<string> Lines => _lines;

    public ILogger CreateLogger(string categoryName) => new Logger(categoryName, _lines);

    public void Dispose() { }

    private sealed class Logger(string category, ConcurrentQueue<string> lines) : ILogger
    {
        public IDisposable? BeginScope<TState>(TState state) where TState : notnull => null;

        public bool IsEnabled(LogLevel logLevel) => logLevel != LogLevel.None;

        public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter)
        {
            // The structured values too: a secret passed as a parameter must not slip past a message template.
            var values = state is IEnumerable<KeyValuePair<string, object?>> kv ? string.Join(" ", kv.Select(p => $"{p.Key}={p.Value}")) : "";
            lines.Enqueue($"{logLevel} {category}[{eventId.Id}] {formatter(state, exception)} {values} {exception}");
        }
    }
}
