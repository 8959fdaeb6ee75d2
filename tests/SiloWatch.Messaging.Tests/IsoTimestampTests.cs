using System.Globalization;
using System.Text;
using SiloWatch.Messaging.Tests.Support;

namespace SiloWatch.Messaging.Tests;

/// <summary>The decoder's hand-written ISO-8601 reader, checked against the BCL's DateTimeOffset parser.</summary>
public sealed class IsoTimestampTests
{
    [Fact]
    public void TheFastReaderAgreesWithDateTimeOffsetParseOnRandomTimesOffsetsAndFractions()
    {
        var random = new Random(1970);
        for (var i = 0; i < 20_000; i++)
        {
            var instant = DateTimeOffset.FromUnixTimeMilliseconds(random.NextInt64(0, 4_102_444_800_000)) // 1970..2100
                .AddTicks(random.Next(0, 10_000));
            var offset = TimeSpan.FromMinutes(15 * random.Next(-14 * 4, (14 * 4) + 1));
            var local = instant.ToOffset(offset);
            var fraction = random.Next(0, 8);
            var format = "yyyy-MM-dd'T'HH:mm:ss" + (fraction > 0 ? "." + new string('f', fraction) : "");
            var text = local.ToString(format, CultureInfo.InvariantCulture) +
                       (offset == TimeSpan.Zero && random.Next(2) == 0 ? "Z" : local.ToString("zzz", CultureInfo.InvariantCulture));

            var expected = DateTimeOffset.Parse(text, CultureInfo.InvariantCulture).ToUnixTimeMilliseconds();

            Assert.True(TelemetryDecoder.TryParseIsoFast(Encoding.ASCII.GetBytes(text), out var actual), text);
            Assert.True(expected == actual, $"{text}: expected {expected}, got {actual}");
        }
    }

    [Theory]
    [InlineData("2026-02-30T00:00:00Z")]
    [InlineData("2026-13-01T00:00:00Z")]
    [InlineData("2026-12-01T25:00:00Z")]
    [InlineData("2026-12-01T10:61:00Z")]
    [InlineData("2026-12-01T10:15:02.Z")]
    [InlineData("2026-12-01T10:15:02.123456789Z")]
    [InlineData("2026-12-01T10:15:02+15:00")]
    [InlineData("2026-12-01 10:15:02Z")]
    [InlineData("2026-12-01T10:15:02ZZ")]
    [InlineData("0000-12-01T10:15:02Z")]
    public void ImpossibleOrOddTimesAreNotReadByTheFastReader(string text) =>
        Assert.False(TelemetryDecoder.TryParseIsoFast(Encoding.ASCII.GetBytes(text), out _));

    [Theory]
    [InlineData("2026-02-30T00:00:00Z")]
    [InlineData("2026-13-01T00:00:00Z")]
    [InlineData("2026-12-01T25:00:00Z")]
    public void ImpossibleTimesAreRejectedByTheDecoderToo(string text)
    {
        var receiver = new CollectingReceiver();
        new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions { MaxLateness = TimeSpan.Zero })
            .Decode(Encoding.UTF8.GetBytes($$"""{"ts":"{{text}}","sensor":"LC1","value":1,"unit":"mV/V"}"""), DemoPlant.NowMs, receiver);

        Assert.Equal(RejectReason.InvalidTimestamp, receiver.SingleRejection().Reason);
    }
}
