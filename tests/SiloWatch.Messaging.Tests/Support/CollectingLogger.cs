using Xunit.Abstractions;
using System.Collections.Concurrent;
using Microsoft.Extensions.Logging;

namespace SiloWatch.Messaging.Tests.Support;

/// <summary>One log call as seen by <see cref="CollectingLogger"/>.</summary>
public sealed record LogEntry(LogLevel Level, string Message, Exception? Exception);

/// <summary>An <see cref="ILogger"/> that keeps every entry (thread-safe), optionally echoing to the test output.</summary>
public sealed class CollectingLogger(string name = "test", ITestOutputHelper? output = null) : ILogger
{
    private readonly ConcurrentQueue<LogEntry> _entries = new();

    public IReadOnlyList<LogEntry> Entries => [.. _entries];

    public IReadOnlyList<LogEntry> Errors => [.. _entries.Where(e => e.Level >= LogLevel.Error)];

    public IDisposable? BeginScope<TState>(TState state)
        where TState : notnull => null;

    public bool IsEnabled(LogLevel logLevel) => logLevel >= LogLevel.Debug;

    public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter)
    {
        var entry = new LogEntry(logLevel, formatter(state, exception), exception);
        _entries.Enqueue(entry);
        try
        {
            output?.WriteLine($"{DateTime.UtcNow:HH:mm:ss.fff} [{name} {logLevel}] {entry.Message}{(exception is null ? "" : " | " + exception.GetType().Name + ": " + exception.Message)}");
        }
        catch (InvalidOperationException)
        {
            // The test already finished: xunit refuses late output.
        }
    }

    public int Count(LogLevel level, string containing) =>
        _entries.Count(e => e.Level == level && e.Message.Contains(containing, StringComparison.Ordinal));

    /// <summary>Fails the test when anything was logged at Error or above.</summary>
    public void AssertNoErrors()
    {
        var errors = Errors;
        Assert.True(errors.Count == 0, $"{name} logged errors:\n" + string.Join("\n", errors.Select(e => e.Message + " " + e.Exception)));
    }
}
