using Microsoft.Extensions.Time.Testing;

namespace SiloWatch.Storage.Tests;

public sealed class PointBufferTests
{
    private static readonly SeriesKey Series = new("m", [], "a", "b");

    [Fact]
    public void WhenTheBufferIsFullTheCallerHandsTheBatchToTheOverflowInsteadOfDroppingIt()
    {
        var overflowed = new List<(long Ts, double A)>();
        using var buffer = new PointBuffer(batchSize: 10, capacityPoints: 10, TimeSpan.FromHours(1), new FakeTimeProvider(), batch =>
        {
            for (var i = 0; i < batch.Count; i++)
            {
                overflowed.Add((batch.Timestamps[i], batch.ValuesOf(i)[0]));
            }
        });

        for (var i = 0; i < 35; i++)
        {
            buffer.Add(Series, i, [i, -i]);
        }

        // Nothing drains the queue: the first full batch is queued, the next two overflow, five wait in the current batch.
        Assert.True(buffer.Reader.TryRead(out var queued));
        Assert.Equal(10, ((PointBatch)queued).Count);
        Assert.Equal(Enumerable.Range(10, 20).Select(i => ((long)i, (double)i)), overflowed);
        Assert.Equal(20, buffer.OverflowPoints);
        Assert.Equal(15, buffer.BufferedPoints);
    }

    [Fact]
    public void ThePartialBatchIsQueuedWhenTheFlushIntervalPasses()
    {
        var time = new FakeTimeProvider();
        using var buffer = new PointBuffer(100, 1000, TimeSpan.FromSeconds(1), time, _ => Assert.Fail("no overflow expected"));
        buffer.Add(Series, 1, [1, 2]);
        Assert.False(buffer.Reader.TryRead(out _));

        time.Advance(TimeSpan.FromSeconds(1));

        Assert.True(buffer.Reader.TryRead(out var item));
        var batch = (PointBatch)item;
        Assert.Equal(1, batch.Count);
        Assert.Equal([1.0, 2.0], batch.ValuesOf(0).ToArray());
    }

    [Fact]
    public void AFlushQueuesThePartialBatchFollowedByItsMarker()
    {
        using var buffer = new PointBuffer(100, 1000, TimeSpan.FromHours(1), new FakeTimeProvider(), _ => { });
        buffer.Add(Series, 1, [1, 2]);

        var flushed = buffer.FlushAsync(CancellationToken.None);

        Assert.True(buffer.Reader.TryRead(out var first));
        Assert.IsType<PointBatch>(first);
        Assert.True(buffer.Reader.TryRead(out var second));
        var marker = Assert.IsType<FlushMarker>(second);
        Assert.False(flushed.IsCompleted);
        marker.Complete();
        Assert.True(flushed.IsCompletedSuccessfully);
    }

    [Fact]
    public void WritingAfterCompletionThrowsInsteadOfLosingThePoint()
    {
        var buffer = new PointBuffer(10, 100, TimeSpan.FromHours(1), new FakeTimeProvider(), _ => { });
        buffer.Complete();

        Assert.Throws<ObjectDisposedException>(() => buffer.Add(Series, 1, [1, 2]));
    }
}
