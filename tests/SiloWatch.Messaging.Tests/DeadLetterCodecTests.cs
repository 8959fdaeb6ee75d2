using System.Text.Json;

namespace SiloWatch.Messaging.Tests;

public sealed class DeadLetterCodecTests
{
    [Fact]
    public void ADeadLetterCarriesEveryFieldOfTheRejection()
    {
        var rejection = new TelemetryRejection(RejectReason.WrongUnit, "unit 'V' but sensor LC1 declares 'mV/V'", "brackenford", "S1",
            "LC1", "gw-east-1", 1842, """{"sensor":"LC1","value":1,"unit":"V"}""");
        var receivedMs = new DateTimeOffset(2026, 12, 1, 10, 15, 3, 40, TimeSpan.Zero).ToUnixTimeMilliseconds();

        using var json = JsonDocument.Parse(DeadLetterCodec.Encode(rejection, receivedMs));
        var root = json.RootElement;

        Assert.Equal("wrong-unit", root.GetProperty("reason").GetString());
        Assert.Equal(rejection.Detail, root.GetProperty("detail").GetString());
        Assert.Equal("brackenford", root.GetProperty("site").GetString());
        Assert.Equal("S1", root.GetProperty("silo").GetString());
        Assert.Equal("LC1", root.GetProperty("sensor").GetString());
        Assert.Equal("gw-east-1", root.GetProperty("pub").GetString());
        Assert.Equal(1842, root.GetProperty("seq").GetInt64());
        Assert.Equal(rejection.Fragment, root.GetProperty("fragment").GetString());
        Assert.Equal("2026-12-01T10:15:03.040Z", root.GetProperty("receivedAt").GetString());
    }

    [Fact]
    public void MissingSensorPublisherAndSequenceAreWrittenAsNull()
    {
        var rejection = new TelemetryRejection(RejectReason.MalformedJson, "not well-formed JSON", "brackenford", "S1", null, null, null, "{\"x\"");

        using var json = JsonDocument.Parse(DeadLetterCodec.Encode(rejection, 0));

        Assert.Equal(JsonValueKind.Null, json.RootElement.GetProperty("sensor").ValueKind);
        Assert.Equal(JsonValueKind.Null, json.RootElement.GetProperty("pub").ValueKind);
        Assert.Equal(JsonValueKind.Null, json.RootElement.GetProperty("seq").ValueKind);
        Assert.Equal("malformed-json", json.RootElement.GetProperty("reason").GetString());
    }

    [Theory]
    [InlineData(RejectReason.PayloadTooLarge, "payload-too-large")]
    [InlineData(RejectReason.TimestampInFuture, "timestamp-in-future")]
    [InlineData(RejectReason.NotFinite, "not-finite")]
    [InlineData(RejectReason.OutOfRange, "out-of-range")]
    [InlineData(RejectReason.DuplicateMessage, "duplicate-message")]
    public void ReasonsAreWrittenInKebabCase(RejectReason reason, string name) => Assert.Equal(name, DeadLetterCodec.ReasonName(reason));

    [Fact]
    public void EveryReasonNameParsesBack()
    {
        foreach (var reason in Enum.GetValues<RejectReason>())
        {
            Assert.True(DeadLetterCodec.TryParseReason(DeadLetterCodec.ReasonName(reason), out var parsed));
            Assert.Equal(reason, parsed);
        }

        Assert.False(DeadLetterCodec.TryParseReason("no-such-reason", out _));
    }
}
