using System.Collections.Concurrent;
using Microsoft.Extensions.Logging;
using Xunit.Abstractions;

namespace SiloWatch.Storage.Tests.Support;

/// <summary>Writes log lines to the test output and keeps them, so a test can look for a warning.</summary>
public sealed class TestLogger<T>(ITestOutputHelper? output = null) : ILogger<T>
{
    public ConcurrentQueue<(LogLevel Level, string Message)> Entries { get; } = new();

    public IDisposable? BeginScope<TState>(TState state)
        where TState : notnull => null;

    public bool IsEnabled(LogLevel logLevel) => true;

    public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter)
    {
        var message = formatter(state, exception) + (exception is null ? "" : " | " + exception.Message);
        Entries.Enqueue((logLevel, message));
        try
        {
            output?.WriteLine($"{DateTime.UtcNow:HH:mm:ss.fff} {logLevel} {typeof(T).Name}: {message}");
        }
        catch (InvalidOperationException)
        {
            // the test has ended; background writers may still log
        }
    }

    public bool Logged(LogLevel level, string fragment) =>
        Entries.Any(e => e.Level == level && e.Message.Contains(fragment, StringComparison.Ordinal));
}
