using SiloWatch.Messaging.Tests.Support;

namespace SiloWatch.Messaging.Tests;

public sealed class TopicSchemeTests
{
    private readonly TopicScheme _topics = new("silowatch");

    [Fact]
    public void EveryTopicOfTheContractIsBuiltFromThePrefix()
    {
        Assert.Equal("silowatch/v1/telemetry/brackenford/S1", _topics.Telemetry("brackenford", "S1"));
        Assert.Equal("silowatch/v1/telemetry/brackenford/S1", _topics.TelemetryFilter("brackenford", "S1"));
        Assert.Equal("silowatch/v1/telemetry/+/+", _topics.TelemetryFilterAll());
        Assert.Equal("silowatch/v1/deadletter/brackenford/S1", _topics.DeadLetter("brackenford", "S1"));
        Assert.Equal("silowatch/v1/state/brackenford/S1", _topics.State("brackenford", "S1"));
        Assert.Equal("silowatch/v1/alarms/brackenford/S1", _topics.Alarms("brackenford", "S1"));
        Assert.Equal("silowatch/v1/events/brackenford/S1", _topics.Events("brackenford", "S1"));
        Assert.Equal("silowatch/v1/command/brackenford/S1", _topics.Command("brackenford", "S1"));
        Assert.Equal("silowatch/v1/command/+/+", _topics.CommandFilterAll());
        Assert.Equal("silowatch/v1/instance/shard-0", _topics.InstanceStatus("shard-0"));
        Assert.Equal("plant7/v1/state/a/B", new TopicScheme("plant7").State("a", "B"));
    }

    [Fact]
    public void AValidTelemetryTopicParsesIntoSiteAndSilo()
    {
        Assert.True(_topics.TryParseTelemetry("silowatch/v1/telemetry/brackenford/S1", out var site, out var silo));
        Assert.Equal(("brackenford", "S1"), (site, silo));
        Assert.True(_topics.TryParseCommand("silowatch/v1/command/brackenford/C1", out site, out silo));
        Assert.Equal(("brackenford", "C1"), (site, silo));
    }

    [Theory]
    [InlineData("silowatch/v1/telemetry/+/S1")]
    [InlineData("silowatch/v1/telemetry/brackenford/#")]
    [InlineData("silowatch/v1/telemetry/brackenford/+")]
    [InlineData("silowatch/v1/telemetry//S1")]
    [InlineData("silowatch/v1/telemetry/brackenford/")]
    [InlineData("silowatch/v1/telemetry/brackenford")]
    [InlineData("silowatch/v1/telemetry/brackenford/S1/extra")]
    [InlineData("silowatch/v1/telemetry/Brackenford/S1")] // site ids are lower case
    [InlineData("silowatch/v1/telemetry/brackenford/S 1")]
    [InlineData("silowatch/v1/telemetry/brackenford/S1\n")]
    [InlineData("silowatch/v1/telemetry/brackenford/../etc")]
    [InlineData("silowatch/v1/telemetry/brackenford/S1.csv")]
    [InlineData("silowatch/v1/telemetry/br\u00e4ckenford/S1")]
    [InlineData("silowatch/v1/telemetry/-site/S1")]
    [InlineData("silowatch/v1/telemetry/brackenford/S1\u0000")]
    [InlineData("silowatch/v2/telemetry/brackenford/S1")]
    [InlineData("other/v1/telemetry/brackenford/S1")]
    [InlineData("silowatch/v1/state/brackenford/S1")]
    [InlineData("")]
    public void OddTopicsAreRefused(string topic)
    {
        Assert.False(_topics.TryParseTelemetry(topic, out _, out _));
        Assert.False(_topics.TryGetTelemetrySiloKey(topic, out _));
    }

    [Fact]
    public void OverLongLevelsAreRefused()
    {
        var longest = new string('a', 48);
        Assert.True(_topics.TryParseTelemetry($"silowatch/v1/telemetry/{longest}/S1", out _, out _));
        Assert.False(_topics.TryParseTelemetry($"silowatch/v1/telemetry/{longest}a/S1", out _, out _));
        Assert.False(_topics.TryParseTelemetry($"silowatch/v1/telemetry/site/{new string('S', 49)}", out _, out _));
        Assert.False(_topics.TryParseTelemetry("silowatch/v1/telemetry/site/" + new string('S', 5000), out _, out _));
    }

    [Fact]
    public void TheSiloKeyOfATelemetryTopicFindsTheSiloInTheRegistry()
    {
        Assert.True(_topics.TryGetTelemetrySiloKey("silowatch/v1/telemetry/brackenford/C1", out var key));
        Assert.True(DemoPlant.Registry.TryGetSilo(key, out var silo));
        Assert.Equal("C1", silo.SiloId);
    }

    [Theory]
    [InlineData("")]
    [InlineData("a/b")]
    [InlineData("+")]
    [InlineData("#")]
    [InlineData("$SYS")]
    [InlineData("with space")]
    public void AnInvalidPrefixIsRefusedAtConstruction(string prefix) =>
        Assert.Throws<ArgumentException>(() => new TopicScheme(prefix));

    [Fact]
    public void BuildingATopicFromAnInvalidIdThrowsInsteadOfPublishingWildcards()
    {
        Assert.Throws<ArgumentException>(() => _topics.State("brackenford", "+"));
        Assert.Throws<ArgumentException>(() => _topics.Telemetry("a/b", "S1"));
        Assert.Throws<ArgumentException>(() => _topics.InstanceStatus("#"));
    }
}
