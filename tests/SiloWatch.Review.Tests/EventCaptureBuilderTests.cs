using SiloWatch.Storage;

namespace SiloWatch.Review.Tests;

public sealed class EventCaptureBuilderTests
{
    private static readonly CaptureChannel[] Two =
    [
        new("mass_kg", CaptureChannelKind.Mass, "kg"),
        new("strain_micro:G1", CaptureChannelKind.Strain, "microstrain", "G1", "R1", 0),
    ];

    private static EventCaptureBuilder Builder(int maxFrames = 7200, long preStartMs = 60_000) => new("brackenford", "S1", Two, 1000, preStartMs, maxFrames);

    [Fact]
    public void WhileIdleOnlyTheLatestFramesAreHeldAndTheEventStartsWithThoseAfterItsPreStartMoment()
    {
        var b = Builder();
        for (var i = 0; i < 5000; i++)
        {
            b.Offer(i * 1000L, [i, -i]);
            Assert.True(b.HeldFrames <= b.PreStartCapacity, $"{b.HeldFrames} frames held while idle");
        }

        Assert.Equal(b.PreStartCapacity, b.HeldFrames);
        b.Start(4999_000 - 60_000);
        Assert.True(b.Capturing);
        Assert.Equal(61, b.EventFrames.Count);
        Assert.Equal(4939_000, b.EventFrames[0].TimestampMs);
        Assert.Equal(4939f, b.EventFrames[0].Values[0]);
    }

    [Fact]
    public void AFrameOfferedSoonerThanTheIntervalIsSkipped()
    {
        var b = Builder();
        Assert.True(b.Offer(0, [1, 1]));
        Assert.False(b.Offer(400, [2, 2]));
        Assert.True(b.Offer(1000, [3, 3]));
        Assert.Equal(2, b.HeldFrames);
    }

    [Fact]
    public void ALongEventIsHalvedInResolutionToStayWithinItsCapAndKeepsItsWholeSpan()
    {
        var b = Builder(maxFrames: 100);
        b.Start(0);
        for (var i = 0; i < 3000; i++)
        {
            b.Offer(i * 1000L, [i, i % 2 == 0 ? 10 : 20]);
            Assert.True(b.HeldFrames <= 100, $"{b.HeldFrames} frames held at {i}");
        }

        var capture = b.Finish(0, long.MaxValue);
        Assert.False(b.Capturing);
        Assert.True(capture.Decimations >= 5, $"{capture.Decimations} decimations");
        Assert.Equal(1000L << capture.Decimations, capture.IntervalMs);
        Assert.InRange(capture.Frames.Count, 40, 100);
        // The whole span is kept: the first frame is the mean of the first group, the last near the end.
        Assert.True(capture.Frames[0].TimestampMs < capture.IntervalMs, $"first frame at {capture.Frames[0].TimestampMs}");
        Assert.True(capture.Frames[^1].TimestampMs > 3000_000 - (2 * capture.IntervalMs), $"last frame at {capture.Frames[^1].TimestampMs}");
        // Frames are means: the alternating 10/20 averages to 15, and time and value stay in step.
        Assert.All(capture.Frames.Take(capture.Frames.Count - 1), f => Assert.Equal(15f, f.Values[1], 3));
        Assert.All(capture.Frames, f => Assert.Equal(f.TimestampMs / 1000.0, f.Values[0], 0));
        Assert.Equal(capture.Frames.OrderBy(f => f.TimestampMs).Select(f => f.TimestampMs), capture.Frames.Select(f => f.TimestampMs));
    }

    [Fact]
    public void AveragingIgnoresUnknownValues()
    {
        var b = Builder(maxFrames: 16);
        b.Start(0);
        for (var i = 0; i < 16; i++)
        {
            b.Offer(i * 1000L, [i % 2 == 0 ? double.NaN : 4, double.NaN]);
        }

        var capture = b.Finish(0, long.MaxValue);
        Assert.Equal(1, capture.Decimations);
        Assert.All(capture.Frames, f => Assert.Equal(4f, f.Values[0]));
        Assert.All(capture.Frames, f => Assert.True(float.IsNaN(f.Values[1])));
    }

    [Fact]
    public void FinishKeepsOnlyTheRequestedWindowAndTheFramesAfterTheEndServeTheNextPreStart()
    {
        var b = Builder();
        for (var i = 0; i < 100; i++)
        {
            b.Offer(i * 1000L, [i, 0]);
        }

        b.Start(40_000);
        for (var i = 100; i < 300; i++)
        {
            b.Offer(i * 1000L, [i, 0]);
        }

        var capture = b.Finish(40_000, 250_000);
        Assert.Equal(40_000, capture.Frames[0].TimestampMs);
        Assert.Equal(250_000, capture.Frames[^1].TimestampMs);
        Assert.Equal(211, capture.Frames.Count);
        b.Start(200_000);
        Assert.Equal(200_000, b.EventFrames[0].TimestampMs);
    }

    [Fact]
    public void AFrameWithTheWrongNumberOfValuesIsRefused() =>
        Assert.Throws<ArgumentException>(() => Builder().Offer(0, [1]));
}
