using System.Collections.Concurrent;
using Serilog.Core;
using Serilog.Events;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>Collects a service's Serilog events (registered in its container: Serilog reads sinks from there).</summary>
public sealed class CollectingLogSink : ILogEventSink
{
    private readonly ConcurrentQueue<LogEvent> _events = new();

    public IReadOnlyCollection<LogEvent> Events => _events;

    public void Emit(LogEvent logEvent) => _events.Enqueue(logEvent);
}
