using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;
using Serilog.Core;
using SiloWatch.Integration.Tests.Support;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// Several hosts in one process (the test run, a load driver) each log to their own sinks. Through the
/// static logger, the last host built received every host's events, and one host stopping silenced the
/// others: a refusal's log line went missing while its count was right.
/// </summary>
public sealed class HostLoggingTests
{
    [Fact]
    public async Task EachHostLogsToItsOwnSinksAndOneStoppingLeavesTheOthersLogging()
    {
        var sinkA = new CollectingLogSink();
        var sinkB = new CollectingLogSink();
        await using var b = new FakeClockHost("log-b", builder => builder.Services.AddSingleton<ILogEventSink>(sinkB));
        var a = new FakeClockHost("log-a", builder => builder.Services.AddSingleton<ILogEventSink>(sinkA));
        var loggerB = b.App.Services.GetRequiredService<ILogger<HostLoggingTests>>();
        var loggerA = a.App.Services.GetRequiredService<ILogger<HostLoggingTests>>();

        loggerA.LogWarning("line from host {Host}", "A");
        loggerB.LogWarning("line from host {Host}", "B");
        await a.DisposeAsync();
        loggerB.LogWarning("line from host {Host} after A stopped", "B");

        Assert.Equal(["line from host \"A\""], sinkA.Events.Select(e => e.RenderMessage()).Where(m => m.StartsWith("line from", StringComparison.Ordinal)));
        Assert.Equal(["line from host \"B\"", "line from host \"B\" after A stopped"],
            sinkB.Events.Select(e => e.RenderMessage()).Where(m => m.StartsWith("line from", StringComparison.Ordinal)));
    }
}
