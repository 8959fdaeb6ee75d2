using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Options;
using Microsoft.Extensions.Time.Testing;
using MQTTnet;
using SiloWatch.Messaging;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests;

/// <summary>Counting and rate-limited logging of messages the broker refused, on a fake clock.</summary>
public sealed class PublishRefusalsTests
{
    private readonly FakeTimeProvider _time = new(new DateTimeOffset(2026, 12, 1, 10, 0, 0, TimeSpan.Zero));
    private readonly Lines _log = new();

    [Fact]
    public void TheFirstRefusalOfAKindIsLoggedAtOnceAndTheNextOnesOncePerIntervalWithTheirCount()
    {
        var refusals = Refusals();

        refusals.Record("silowatch/v1/deadletter/brackenford/S1", MqttClientPublishReasonCode.NotAuthorized);
        for (var i = 0; i < 5; i++)
        {
            _time.Advance(TimeSpan.FromSeconds(1));
            refusals.Record("silowatch/v1/deadletter/brackenford/S2", MqttClientPublishReasonCode.NotAuthorized);
        }

        var first = Assert.Single(_log.Written);
        Assert.Contains("silowatch/v1/deadletter/brackenford/S1", first, StringComparison.Ordinal);
        Assert.Contains("'gw-or-svc'", first, StringComparison.Ordinal);

        // Another kind is logged on its own at once; the first kind again only after the interval.
        refusals.Record("silowatch/v1/alarms/brackenford/S1", MqttClientPublishReasonCode.QuotaExceeded);
        Assert.Equal(2, _log.Written.Count);
        Assert.Contains("QuotaExceeded", _log.Written[1], StringComparison.Ordinal);
        _time.Advance(PublishRefusals.LogInterval);
        refusals.Record("silowatch/v1/deadletter/brackenford/S3", MqttClientPublishReasonCode.NotAuthorized);
        Assert.Equal(3, _log.Written.Count);
        Assert.Contains("(5 more refused on this kind since the last line)", _log.Written[2], StringComparison.Ordinal);

        var snapshot = refusals.Snapshot();
        Assert.Equal(8, snapshot.Total);
        Assert.Equal(7, snapshot.ByKind["deadletter"]);
        Assert.Equal(1, snapshot.ByKind["alarms"]);
        Assert.Equal("silowatch/v1/deadletter/brackenford/S3", snapshot.Last!.Topic);
        Assert.True(snapshot.Recent);
    }

    [Fact]
    public void HealthStopsCallingARefusalRecentAfterTheWindow()
    {
        var refusals = Refusals();
        Assert.False(refusals.Snapshot().Recent);
        refusals.Record("silowatch/v1/state/brackenford/S1", MqttClientPublishReasonCode.NotAuthorized);
        _time.Advance(PublishRefusals.HealthWindow - TimeSpan.FromSeconds(1));
        Assert.True(refusals.Snapshot().Recent);
        _time.Advance(TimeSpan.FromSeconds(1));
        Assert.False(refusals.Snapshot().Recent);
        Assert.Equal(1, refusals.Total);
    }

    [Theory]
    [InlineData("silowatch/v1/state/brackenford/S1", "state")]
    [InlineData("silowatch/v1/instance/silowatch-0", "instance")]
    [InlineData("silowatch/v1/events", "events")]
    [InlineData("other/v1/state/x/y", "other/v1/state/x/y")]
    public void ATopicsKindIsItsContractLevel(string topic, string kind) => Assert.Equal(kind, PublishRefusals.KindOf(topic, "silowatch"));

    private PublishRefusals Refusals() =>
        new(Options.Create(new MqttOptions { Username = "gw-or-svc" }), _time, _log);

    private sealed class Lines : ILogger<PublishRefusals>
    {
        public List<string> Written { get; } = [];

        public IDisposable? BeginScope<TState>(TState state)
            where TState : notnull => null;

        public bool IsEnabled(LogLevel logLevel) => true;

        public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter) =>
            Written.Add(formatter(state, exception));
    }
}
