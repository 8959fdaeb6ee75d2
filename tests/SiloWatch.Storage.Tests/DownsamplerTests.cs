using Microsoft.Extensions.Time.Testing;
using SiloWatch.Storage.Tests.Support;

namespace SiloWatch.Storage.Tests;

public sealed class DownsamplerTests
{
    private readonly FakeTimeProvider _time = new(DateTimeOffset.Parse("2026-03-01T00:00:00Z", System.Globalization.CultureInfo.InvariantCulture));
    private readonly CollectingSink _inner = new();

    private Downsampler Create() => new(_inner, new StorageOptions().Downsampling, _time, new TestLogger<Downsampler>());

    private static SeriesKey Sensor() => Some.SensorSeries("ds");

    private static SeriesKey Estimate() =>
        new(Measurements.SiloEstimate, [new(Tags.Site, "brackenford"), new(Tags.Silo, "S1")], SiloEstimateFields.All);

    [Fact]
    public async Task SensorPointsOfOneSecondBecomeTheirMeanWithMinAndMaxOfValueAndTheWorstQuality()
    {
        await using var sink = Create();
        var s = Sensor();
        // raw, value, quality
        sink.Write(s, 10_000, [1.0, 10, 0]);
        sink.Write(s, 10_250, [2.0, 40, 2]);
        sink.Write(s, 10_500, [3.0, -20, 0]);
        sink.Write(s, 10_999, [6.0, 50, 1]);
        Assert.Empty(_inner.Points);

        sink.Write(s, 11_000, [7.0, 70, 0]); // first point of the next second closes the first

        var p = Assert.Single(_inner.Points);
        Assert.Equal(10_000, p.TimestampMs);
        Assert.Equal(["raw", "value", "quality", "value_min", "value_max"], p.Series.FieldNames);
        Assert.Equal(3.0, p.Fields["raw"], 12);      // (1+2+3+6)/4
        Assert.Equal(20.0, p.Fields["value"], 12);   // (10+40-20+50)/4
        Assert.Equal(-20.0, p.Fields["value_min"]);
        Assert.Equal(50.0, p.Fields["value_max"]);
        Assert.Equal(2.0, p.Fields["quality"]);      // worst code, not the mean
        Assert.Equal(s.Tags, p.Series.Tags);
    }

    [Fact]
    public async Task EstimatesKeepTheLastValueOfEachSecond()
    {
        await using var sink = Create();
        var s = Estimate();
        sink.Write(s, 2_100, [100, 1, 10, -5, 2, 0]);
        sink.Write(s, 2_900, [90, 0.9, 9, -6, 3, 1]);
        sink.Write(s, 3_000, [80, 0.8, 8, -7, 4, 0]);

        var p = Assert.Single(_inner.Points);
        Assert.Equal(2_000, p.TimestampMs);
        Assert.Equal(90, p.Fields[SiloEstimateFields.MassKg]);
        Assert.Equal(-6, p.Fields[SiloEstimateFields.RateKgPerS]);
        Assert.Equal(1, p.Fields[SiloEstimateFields.Quality]);
        Assert.Equal(SiloEstimateFields.All, p.Series.FieldNames);
    }

    [Fact]
    public async Task NaNValuesAreLeftOutOfTheAggregateAndAFieldWithOnlyNaNStaysNaN()
    {
        await using var sink = Create();
        var s = Sensor();
        sink.Write(s, 0, [double.NaN, 4, 0]);
        sink.Write(s, 500, [double.NaN, double.NaN, 0]);
        sink.Write(s, 700, [double.NaN, 8, 0]);
        await sink.FlushAsync(CancellationToken.None);

        var p = Assert.Single(_inner.Points);
        Assert.True(double.IsNaN(p.Fields["raw"]));
        Assert.Equal(6, p.Fields["value"], 12);
        Assert.Equal(4, p.Fields["value_min"]);
        Assert.Equal(8, p.Fields["value_max"]);
    }

    [Fact]
    public async Task AWriterStalledWithItsPointsStillQueuedHasItsIntervalWrittenOnceWhole()
    {
        // A worker starved of CPU for 5 s between two points of one second: by wall-clock silence the
        // interval would be written with the first two points and written again once the rest came.
        await using var sink = Create();
        var s = Sensor();
        sink.CloseIdleByCaller(s);
        sink.Write(s, 5_000, [1, 10, 0]);
        sink.Write(s, 5_100, [3, 30, 0]);

        _time.Advance(TimeSpan.FromSeconds(5));
        Assert.Empty(_inner.Points);

        sink.Write(s, 5_500, [5, 50, 0]);
        sink.Write(s, 5_900, [7, 70, 0]);
        sink.Write(s, 6_000, [9, 90, 0]);

        var p = Assert.Single(_inner.Points);
        Assert.Equal(5_000, p.TimestampMs);
        Assert.Equal(40, p.Fields["value"], 12); // (10+30+50+70)/4: every point of the second, once
        Assert.Equal(0, sink.Health.LatePoints);
    }

    [Fact]
    public async Task TheWriterClosesAnIdleIntervalOnceItsSourceHasBeenSilentForTwoIntervals()
    {
        await using var sink = Create();
        var s = Sensor();
        var other = Some.SensorSeries("ds-timer");
        sink.CloseIdleByCaller(s);
        sink.Write(s, 5_000, [1, 10, 0]);
        sink.Write(s, 5_100, [3, 30, 0]);
        sink.Write(other, 5_000, [1, 10, 0]);

        Assert.False(sink.CloseIfIdle(s, TimeSpan.FromSeconds(1.9)));
        Assert.Empty(_inner.Points);
        Assert.True(sink.CloseIfIdle(s, TimeSpan.FromSeconds(2)));
        var p = Assert.Single(_inner.Points);
        Assert.Equal(s.Tags, p.Series.Tags);
        Assert.Equal(20, p.Fields["value"], 12);
        Assert.False(sink.CloseIfIdle(s, TimeSpan.FromSeconds(3))); // written already, nothing new

        // A series not taken over keeps the wall-clock rule.
        _time.Advance(TimeSpan.FromSeconds(3));
        Assert.Equal(2, _inner.Points.Count);
        Assert.Equal(other.Tags, _inner.Points[1].Series.Tags);
    }

    [Fact]
    public async Task ASilentSeriesIsWrittenAfterTwoIntervalsAndALatePointOfTheSameIntervalRewritesIt()
    {
        await using var sink = Create();
        var s = Sensor();
        sink.Write(s, 5_000, [1, 10, 0]);
        sink.Write(s, 5_100, [3, 30, 0]);

        _time.Advance(TimeSpan.FromSeconds(1));
        Assert.Empty(_inner.Points);
        _time.Advance(TimeSpan.FromSeconds(1.5));
        Assert.Empty(_inner.Points); // silent for 2.5 s, but the last point may have come up to a tick after the one it records
        _time.Advance(TimeSpan.FromSeconds(0.5));
        var first = Assert.Single(_inner.Points);
        Assert.Equal(5_000, first.TimestampMs);
        Assert.Equal(20, first.Fields["value"], 12);

        sink.Write(s, 5_900, [5, 60, 0]);
        await sink.FlushAsync(CancellationToken.None);

        Assert.Equal(2, _inner.Points.Count);
        var second = _inner.Points[1];
        Assert.Equal(5_000, second.TimestampMs); // same timestamp: the store keeps the merged value
        Assert.Equal(100.0 / 3, second.Fields["value"], 12);
        Assert.Equal(60, second.Fields["value_max"]);
    }

    [Fact]
    public async Task APointOlderThanTheIntervalBeingFilledIsCountedAndNotWritten()
    {
        await using var sink = Create();
        var s = Sensor();
        sink.Write(s, 7_000, [1, 1, 0]);
        sink.Write(s, 8_000, [2, 2, 0]);
        sink.Write(s, 7_500, [9, 9, 0]);
        await sink.FlushAsync(CancellationToken.None);

        Assert.Equal([7_000L, 8_000L], _inner.Points.Select(p => p.TimestampMs));
        Assert.Equal(2, _inner.Points[1].Fields["value"]);
        Assert.Equal(1, sink.Health.LatePoints);
    }

    [Fact]
    public async Task MeasurementsWithoutARulePassThroughUnchanged()
    {
        await using var sink = Create();
        var ring = new SeriesKey(Measurements.Ring, [new(Tags.Silo, "S1"), new(Tags.Ring, "R1")], RingFields.All);
        sink.Write(ring, 1_234, [1, 2, 3, 4, 5]);
        sink.Write(ring, 1_235, [6, 7, 8, 9, 10]);

        Assert.Equal(2, _inner.Points.Count);
        Assert.Same(ring, _inner.Points[0].Series);
        Assert.Equal(1_235, _inner.Points[1].TimestampMs);
    }

    [Fact]
    public async Task IntervalsAreAlignedToTheEpochForNegativeAndLongIntervalsToo()
    {
        var rules = new Dictionary<string, DownsamplingOptions> { ["m"] = new() { Interval = TimeSpan.FromMinutes(1), Aggregate = DownsampleAggregate.Min } };
        await using var sink = new Downsampler(_inner, rules, _time, new TestLogger<Downsampler>());
        var s = new SeriesKey("m", [], "v");
        sink.Write(s, -1, [5]);
        sink.Write(s, 59_999, [3]);
        sink.Write(s, 61_000, [4]);
        sink.Write(s, 119_000, [2]);
        await sink.FlushAsync(CancellationToken.None);

        Assert.Equal([-60_000L, 0L, 60_000L], _inner.Points.Select(p => p.TimestampMs));
        Assert.Equal([5.0, 3.0, 2.0], _inner.Points.Select(p => p.Fields["v"]));
    }

    [Fact]
    public async Task DisposingWritesWhatIsPendingAndDisposesTheStore()
    {
        var sink = Create();
        sink.Write(Sensor(), 1_000, [1, 1, 0]);
        await sink.DisposeAsync();

        Assert.Single(_inner.Points);
        Assert.True(_inner.Disposed);
    }

    [Fact]
    public async Task FlushingWhatWasStoredLeavesTheOpenIntervalOpen()
    {
        await using var sink = Create();
        var s = Sensor();
        sink.Write(s, 1_000, [1, 10, 0]);
        sink.Write(s, 2_000, [3, 30, 0]); // closes second 1

        await ((ITimeSeriesSink)sink).FlushStoredAsync(CancellationToken.None);

        var point = Assert.Single(_inner.Points);
        Assert.Equal(1_000, point.TimestampMs);
        Assert.Equal(1, _inner.Flushes);
    }

    [Fact]
    public async Task AnIntervalRestoredFromACheckpointIsCompletedWithThePointsBeforeAndAfterIt()
    {
        var s = Sensor();
        OpenInterval saved;
        await using (var before = Create())
        {
            before.Write(s, 7_100, [1, 10, 0]);
            before.Write(s, 7_200, [2, 20, 1]);
            saved = before.CaptureInterval(s)!;
        }

        // A new process: the same series key again, a new downsampler, the interval restored, then the rest of the second.
        var inner = new CollectingSink();
        await using var after = new Downsampler(inner, new StorageOptions().Downsampling, _time, new TestLogger<Downsampler>());
        var json = new System.Text.Json.JsonSerializerOptions { NumberHandling = System.Text.Json.Serialization.JsonNumberHandling.AllowNamedFloatingPointLiterals };
        after.RestoreInterval(s, System.Text.Json.JsonSerializer.Deserialize<OpenInterval>(System.Text.Json.JsonSerializer.Serialize(saved, json), json)!);
        after.Write(s, 7_900, [6, 60, 0]);
        after.Write(s, 8_000, [0, 0, 0]);

        var point = Assert.Single(inner.Points);
        Assert.Equal(7_000, point.TimestampMs);
        Assert.Equal(3, point.Fields["raw"], 12);
        Assert.Equal(30, point.Fields["value"], 12);
        Assert.Equal(10, point.Fields["value_min"]);
        Assert.Equal(60, point.Fields["value_max"]);
        Assert.Equal(1, point.Fields["quality"]);
    }

    [Fact]
    public async Task ASeriesWithNoPointYetHasNoOpenIntervalAndOneWithoutARuleNeverHas()
    {
        await using var sink = Create();
        var untouched = Sensor();
        Assert.Null(sink.CaptureInterval(untouched));

        var raw = new SeriesKey("ring", [new(Tags.Site, "brackenford")], ["a0_ue"]);
        sink.Write(raw, 1_000, [1]);
        Assert.Null(sink.CaptureInterval(raw));
        Assert.Single(_inner.Points); // passed through
    }
}
