using Microsoft.Extensions.Time.Testing;
using SiloWatch.Storage.Tests.Support;

namespace SiloWatch.Storage.Tests;

public sealed class SqliteTimeSeriesSinkTests : IDisposable
{
    private readonly TempDirectory _dir = new();
    private readonly FakeTimeProvider _time = new(DateTimeOffset.Parse("2026-06-01T00:00:00Z", System.Globalization.CultureInfo.InvariantCulture));

    public void Dispose() => _dir.Dispose();

    // Near the fake clock: the store prunes anything older than its retention.
    private long Base => _time.GetUtcNow().ToUnixTimeMilliseconds() - 3_600_000;

    private SqliteTimeSeriesSink Open(int batchSize = 100, int capacity = 10_000) => new(
        _dir.File("series.db"),
        new TimeSeriesOptions { BatchSize = batchSize, BufferCapacityPoints = capacity, FlushInterval = TimeSpan.FromSeconds(1) },
        TimeSpan.FromDays(30),
        _time,
        new TestLogger<SqliteTimeSeriesSink>());

    [Fact]
    public async Task WrittenPointsAreReadBackByMeasurementFieldTagsAndTime()
    {
        var s1 = Some.SensorSeries("sq", "S1");
        var s2 = Some.SensorSeries("sq", "S2");
        await using var sink = Open();
        for (var i = 0; i < 1000; i++)
        {
            sink.Write(s1, Base + i, [i, i * 2.5, 0]);
            sink.Write(s2, Base + i, [-i, -i * 2.5, 1]);
        }

        await sink.FlushAsync(CancellationToken.None);

        var values = sink.Query(Measurements.Sensor, SensorFields.Value, [new(Tags.Silo, "S1")], Base + 100, Base + 200);
        Assert.Equal(100, values.Count);
        Assert.All(values, v => Assert.Equal((v.TimestampMs - Base) * 2.5, v.Value));
        Assert.All(values, v => Assert.Equal(s1.EscapedTagSet, v.TagSet));
        Assert.Equal(2000, sink.Query(Measurements.Sensor, SensorFields.Quality, null, 0, long.MaxValue).Count);
        Assert.Equal(2000, sink.Health.WrittenPoints);
    }

    [Fact]
    public async Task WritingTheSameSeriesAndTimestampAgainReplacesTheValue()
    {
        var s = new SeriesKey("m", [new("site", "a b")], "v", "w");
        await using (var sink = Open())
        {
            sink.Write(s, Base + 5, [1, double.NaN]);
            sink.Write(s, Base + 5, [2, double.NaN]);
            await sink.FlushAsync(CancellationToken.None);
        }

        await using var reopened = Open();
        var v = Assert.Single(reopened.Query("m", "v", [new("site", "a b")], Base, Base + 10));
        Assert.Equal(2, v.Value);
        Assert.Empty(reopened.Query("m", "w", null, Base, Base + 10)); // NaN is not stored
    }

    [Fact]
    public async Task AnIntervalWrittenAgainForALatePointIsStoredOnceWithTheMergedValues()
    {
        var s = Some.SensorSeries("late");
        var t0 = Base / 1000 * 1000;
        var store = Open();
        await using var sink = new Downsampler(store, new StorageOptions().Downsampling, _time, new TestLogger<Downsampler>());
        sink.CloseIdleByCaller(s);
        sink.Write(s, t0 + 100, [1, 10, 0]);
        sink.Write(s, t0 + 600, [3, 30, 0]);
        sink.Write(s, t0 + 1_000, [5, 50, 0]); // closes the first second
        sink.Write(s, t0 + 2_000, [5, 50, 0]);
        await ((ITimeSeriesSink)sink).FlushStoredAsync(CancellationToken.None);
        Assert.Equal(20, Assert.Single(store.Query(Measurements.Sensor, SensorFields.Value, null, t0, t0 + 999)).Value, 12);

        sink.Write(s, t0 + 900, [2, 80, 2]); // two seconds late
        await ((ITimeSeriesSink)sink).FlushStoredAsync(CancellationToken.None);

        StoredSample Only(string field) => Assert.Single(store.Query(Measurements.Sensor, field, null, t0, t0 + 999));
        Assert.Equal(t0, Only(SensorFields.Value).TimestampMs);
        Assert.Equal(40, Only(SensorFields.Value).Value, 12); // (10+30+80)/3
        Assert.Equal(2, Only(SensorFields.Raw).Value, 12);
        Assert.Equal(10, Only("value_min").Value);
        Assert.Equal(80, Only("value_max").Value);
        Assert.Equal(2, Only(SensorFields.Quality).Value);
        Assert.Equal(50, Assert.Single(store.Query(Measurements.Sensor, SensorFields.Value, null, t0 + 1_000, t0 + 1_999)).Value);
        Assert.Equal(0, sink.Health.LatePoints);
    }

    [Fact]
    public async Task WhenTheBufferIsFullTheCallerWritesToTheFileAndNothingIsLost()
    {
        var s = new SeriesKey("m", [], "v");
        await using var sink = Open(batchSize: 10, capacity: 10);
        var writers = Enumerable.Range(0, 4).Select(t => Task.Run(() =>
        {
            for (var i = 0; i < 2500; i++)
            {
                sink.Write(s, Base + (t * 10_000) + i, [i]);
            }
        })).ToArray();
        await Task.WhenAll(writers);
        await sink.FlushAsync(CancellationToken.None);

        Assert.Equal(10_000, sink.Query("m", "v", null, 0, long.MaxValue).Count);
        Assert.Equal(10_000, sink.Health.WrittenPoints);
        Assert.Equal(0, sink.Health.DiscardedPoints);
    }

    [Fact]
    public async Task SamplesOlderThanTheRetentionArePruned()
    {
        var s = new SeriesKey("m", [], "v");
        var now = _time.GetUtcNow().ToUnixTimeMilliseconds();
        await using var sink = Open();
        sink.Write(s, now - (long)TimeSpan.FromDays(40).TotalMilliseconds, [1]);
        sink.Write(s, now - (long)TimeSpan.FromDays(10).TotalMilliseconds, [2]);
        await sink.FlushAsync(CancellationToken.None);

        Assert.Equal([2.0], sink.Query("m", "v", null, 0, long.MaxValue).Select(x => x.Value));
    }

    [Fact]
    public async Task AnotherReaderSeesTheSeriesAndSamplesWhileTheSinkIsOpen()
    {
        var s = Some.SensorSeries("reader", "C1", "T-R1-000");
        await using var sink = Open();
        sink.Write(s, Base, [21.5, 21.4, 0]);
        sink.Write(s, Base + 1000, [21.7, 21.6, 0]);
        await sink.FlushAsync(CancellationToken.None);

        using var reader = new EmbeddedSeriesReader(sink.Path);

        var listed = reader.ListSeries(Measurements.Sensor);
        Assert.Equal(SensorFields.All.Order(StringComparer.Ordinal), listed.Select(x => x.Field));
        Assert.All(listed, x => Assert.Equal(s.Tags, x.Tags));
        Assert.Equal([21.4, 21.6], reader.Query(Measurements.Sensor, SensorFields.Value, [new(Tags.Silo, "C1")], Base, Base + 2000).Select(x => x.Value));
        Assert.Throws<FileNotFoundException>(() => new EmbeddedSeriesReader(_dir.File("absent.db")));
    }
}
