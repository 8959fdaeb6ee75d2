using SiloWatch.Review.Tests.Support;
using SiloWatch.Storage;

namespace SiloWatch.Review.Tests;

public sealed class EventCaptureCodecTests
{
    [Fact]
    public void ACaptureSurvivesEncodingWithItsChannelsTimesAndValuesIncludingUnknowns()
    {
        var capture = SomeEvents.Eccentric().Capture!;
        var decoded = EventCaptureCodec.Decode(EventCaptureCodec.Encode(capture));

        Assert.Equal(capture.SiteId, decoded.SiteId);
        Assert.Equal(capture.SiloId, decoded.SiloId);
        Assert.Equal(capture.IntervalMs, decoded.IntervalMs);
        Assert.Equal(capture.Channels.Select(c => (c.Name, c.Kind, c.Unit, c.Sensor, c.Ring)), decoded.Channels.Select(c => (c.Name, c.Kind, c.Unit, c.Sensor, c.Ring)));
        Assert.Equal(60.0, decoded.Channels.Single(c => c.Sensor == "R1-001" && c.Kind == CaptureChannelKind.Strain).AngleDeg);
        Assert.True(double.IsNaN(decoded.Channels[0].AngleDeg));
        Assert.Equal(capture.Frames.Select(f => f.TimestampMs), decoded.Frames.Select(f => f.TimestampMs));
        for (var i = 0; i < capture.Frames.Count; i++)
        {
            Assert.Equal(capture.Frames[i].Values, decoded.Frames[i].Values); // float equality; NaN equals NaN here
        }

        Assert.Contains(decoded.Frames, f => float.IsNaN(f.Values[decoded.IndexOf("a1_ratio:R1")]));
    }

    [Fact]
    public void TheStoredFormIsSmallerThanTheRawTable()
    {
        var capture = SomeEvents.Eccentric().Capture!;
        var raw = capture.Frames.Count * ((capture.Channels.Count * 4) + 8);
        var stored = EventCaptureCodec.Encode(capture).Length;
        Assert.True(stored < raw / 2, $"{stored} bytes stored for {raw} raw");
    }

    [Fact]
    public void ADamagedCaptureIsRefusedWithAClearError()
    {
        var data = EventCaptureCodec.Encode(SomeEvents.Eccentric().Capture!);
        Assert.Throws<InvalidDataException>(() => EventCaptureCodec.Decode(data[..(data.Length / 2)]));
        Assert.Throws<InvalidDataException>(() => EventCaptureCodec.Decode("{}"u8.ToArray()));
    }
}
