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
    public async Task ALatePointWithinTheWindowIsMergedAndItsIntervalWrittenAgainWithTheSameTimestamp()
    {
        await using var sink = Create();
        var s = Sensor();
        sink.Write(s, 7_000, [1, 10, 0]);
        sink.Write(s, 7_400, [3, 30, 0]);
        sink.Write(s, 8_000, [2, 2, 0]);   // second 7 written: mean 20
        sink.Write(s, 9_000, [4, 4, 0]);   // second 8 written

        sink.Write(s, 7_700, [5, 80, 3]);  // two seconds late, as from a gateway's store-and-forward

        Assert.Equal([7_000L, 8_000L, 7_000L], _inner.Points.Select(p => p.TimestampMs));
        Assert.Equal(20, _inner.Points[0].Fields["value"], 12);
        var rewritten = _inner.Points[2];
        Assert.Equal(3, rewritten.Fields["raw"], 12);       // (1+3+5)/3
        Assert.Equal(40, rewritten.Fields["value"], 12);    // (10+30+80)/3
        Assert.Equal(10, rewritten.Fields["value_min"]);
        Assert.Equal(80, rewritten.Fields["value_max"]);
        Assert.Equal(3, rewritten.Fields["quality"]);       // the worst code, the late point's
        Assert.Equal(0, sink.Health.LatePoints);

        await sink.FlushAsync(CancellationToken.None);      // the open second 9 is untouched by the merge
        Assert.Equal(9_000, _inner.Points[^1].TimestampMs);
        Assert.Equal(4, _inner.Points[^1].Fields["value"]);
    }

    [Fact]
    public async Task ALatePointOfAnIntervalThatHadNoPointIsWrittenAsThatIntervalAlone()
    {
        await using var sink = Create();
        var s = Sensor();
        sink.Write(s, 5_000, [1, 10, 0]);
        sink.Write(s, 8_000, [1, 10, 0]);     // seconds 6 and 7 had nothing yet
        sink.Write(s, 6_300, [2, 20, 0]);
        sink.Write(s, 6_600, [4, 40, 1]);

        Assert.Equal([5_000L, 6_000L, 6_000L], _inner.Points.Select(p => p.TimestampMs));
        Assert.Equal(20, _inner.Points[1].Fields["value"]);
        Assert.Equal(30, _inner.Points[2].Fields["value"], 12); // both late points, not the 5 s one
        Assert.Equal(20, _inner.Points[2].Fields["value_min"]);
        Assert.Equal(0, sink.Health.LatePoints);
    }

    [Fact]
    public async Task APointMoreThanTheWindowBehindIsCountedLoggedWithTheWindowAndNotWritten()
    {
        var rules = new StorageOptions().Downsampling;
        Assert.Equal(TimeSpan.FromSeconds(10), rules[Measurements.Sensor].LateMergeWindow);
        var log = new TestLogger<Downsampler>();
        await using var sink = new Downsampler(_inner, rules, _time, log);
        var s = Sensor();
        sink.Write(s, 100_000, [1, 1, 0]);
        sink.Write(s, 101_000, [2, 2, 0]);
        sink.Write(s, 111_000, [3, 3, 0]);  // seconds 100 and 101 written

        sink.Write(s, 100_900, [9, 9, 0]);  // 11 s behind second 111: outside the window
        sink.Write(s, 101_100, [5, 6, 0]);  // 10 s behind: merged

        Assert.Equal([100_000L, 101_000L, 101_000L], _inner.Points.Select(p => p.TimestampMs));
        Assert.Equal(1, _inner.Points[0].Fields["value"]);
        Assert.Equal(4, _inner.Points[2].Fields["value"], 12);
        Assert.Equal(1, sink.Health.LatePoints);
        Assert.True(log.Logged(Microsoft.Extensions.Logging.LogLevel.Warning, "late-merge window (00:00:10)"), string.Join("; ", log.Entries));
    }

    [Fact]
    public async Task WithAWindowOfZeroOnlyTheIntervalBeingFilledTakesPoints()
    {
        var rules = new StorageOptions().Downsampling;
        rules[Measurements.Sensor].LateMergeWindow = TimeSpan.Zero;
        await using var sink = new Downsampler(_inner, rules, _time, new TestLogger<Downsampler>());
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
    public async Task APointOlderThanTheFirstIntervalHeldIsNotWrittenOverWhatTheStoreMayHold()
    {
        await using var sink = Create();
        var s = Sensor();
        sink.Write(s, 10_000, [1, 1, 0]);
        sink.Write(s, 11_000, [2, 2, 0]);
        sink.Write(s, 9_500, [9, 9, 0]); // within 30 s, but second 9 was never held here

        Assert.Equal([10_000L], _inner.Points.Select(p => p.TimestampMs));
        Assert.Equal(1, sink.Health.LatePoints);
    }

    [Fact]
    public async Task LastIsTheValueWithTheNewestTimestampWhateverTheOrderOfArrival()
    {
        await using var sink = Create();
        var s = Estimate();
        sink.Write(s, 2_900, [90, 0.9, 9, -6, 3, 1]);
        sink.Write(s, 2_100, [100, 1, 10, -5, 2, 0]);          // older, arrived later
        sink.Write(s, 2_500, [95, double.NaN, 9.5, -5.5, 2.5, 0]);
        sink.Write(s, 3_000, [80, 0.8, 8, -7, 4, 0]);

        var first = Assert.Single(_inner.Points);
        Assert.Equal(90, first.Fields[SiloEstimateFields.MassKg]);
        Assert.Equal(0.9, first.Fields[SiloEstimateFields.LevelM]);
        Assert.Equal(1, first.Fields[SiloEstimateFields.Quality]);

        sink.Write(s, 2_950, [85, double.NaN, 8.5, -6.5, 3.5, 2]); // late, and the newest of second 2
        sink.Write(s, 2_200, [70, 0.7, 7, -4, 1, 0]);              // late, and older than what is there

        Assert.Equal(3, _inner.Points.Count);
        Assert.All(_inner.Points.Skip(1), p => Assert.Equal(2_000, p.TimestampMs));
        var merged = _inner.Points[2];
        Assert.Equal(85, merged.Fields[SiloEstimateFields.MassKg]);
        Assert.Equal(0.9, merged.Fields[SiloEstimateFields.LevelM]); // the newest point had no level: the newest with one
        Assert.Equal(2, merged.Fields[SiloEstimateFields.Quality]);
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
    public async Task AfterARestoreTheWindowBeginsAtTheRestoredIntervalAndLastKeepsItsTimestamp()
    {
        var s = Estimate();
        OpenInterval saved;
        await using (var before = Create())
        {
            before.Write(s, 6_500, [60, 0.6, 6, -1, 1, 0]);
            before.Write(s, 7_900, [90, 0.9, 9, -6, 3, 1]);
            saved = before.CaptureInterval(s)!;
        }

        Assert.NotNull(saved.LastTimestampMs);
        var json = new System.Text.Json.JsonSerializerOptions { NumberHandling = System.Text.Json.Serialization.JsonNumberHandling.AllowNamedFloatingPointLiterals };
        var inner = new CollectingSink();
        await using var after = new Downsampler(inner, new StorageOptions().Downsampling, _time, new TestLogger<Downsampler>());
        after.RestoreInterval(s, System.Text.Json.JsonSerializer.Deserialize<OpenInterval>(System.Text.Json.JsonSerializer.Serialize(saved, json), json)!);
        after.Write(s, 7_100, [70, 0.7, 7, -2, 2, 0]); // redelivered after the restart: older than the saved last
        after.Write(s, 6_800, [65, 0.65, 6.5, -1.5, 1.5, 0]); // second 6 is with the store already; not known here

        Assert.Empty(inner.Points);
        Assert.Equal(1, after.Health.LatePoints);
        await after.FlushAsync(CancellationToken.None);
        var point = Assert.Single(inner.Points);
        Assert.Equal(7_000, point.TimestampMs);
        Assert.Equal(90, point.Fields[SiloEstimateFields.MassKg]);
    }

    [Fact]
    public async Task ACheckpointSavedWithoutLastTimestampsStillRestores()
    {
        var s = Estimate();
        // The checkpoint's JSON as written before intervals carried the timestamp of their last value.
        const string Saved = """{"Bucket":7,"Dirty":true,"Sum":[0,0,0,0,0,0],"Count":[1,1,1,1,1,1],"Min":["Infinity","Infinity","Infinity","Infinity","Infinity","Infinity"],"Max":["-Infinity","-Infinity","-Infinity","-Infinity","-Infinity","-Infinity"],"Last":[90,0.9,9,-6,3,1]}""";
        var json = new System.Text.Json.JsonSerializerOptions { NumberHandling = System.Text.Json.Serialization.JsonNumberHandling.AllowNamedFloatingPointLiterals };
        await using var sink = Create();
        sink.RestoreInterval(s, System.Text.Json.JsonSerializer.Deserialize<OpenInterval>(Saved, json)!);
        sink.Write(s, 7_400, [70, 0.7, 7, -2, 2, 0]);
        await sink.FlushAsync(CancellationToken.None);

        var point = Assert.Single(_inner.Points);
        Assert.Equal(7_000, point.TimestampMs);
        Assert.Equal(70, point.Fields[SiloEstimateFields.MassKg]); // without a timestamp the saved value counts as the oldest
    }

    [Fact]
    public async Task WritingAllocatesNothingWhenIntervalsCloseAndLatePointsAreMerged()
    {
        var counting = new CountingSink();
        await using var sink = new Downsampler(counting, new StorageOptions().Downsampling, _time, new TestLogger<Downsampler>());
        var s = Sensor();
        var e = Estimate();
        void Round(long baseMs)
        {
            for (var i = 0; i < 40; i++)
            {
                var t = baseMs + (i * 250);
                sink.Write(s, t, [1, i, 0]);
                sink.Write(e, t, [i, 1, 2, 3, 4, 0]);
                if (i % 8 == 7)
                {
                    sink.Write(s, t - 1_750, [2, -i, 1]); // late by one or two seconds: merged and written again
                    sink.Write(e, t - 1_500, [-i, 1, 2, 3, 4, 0]);
                }
            }
        }

        Round(100_000); // series state made, code paths run once
        var writes = counting.Writes;
        var before = GC.GetAllocatedBytesForCurrentThread();
        Round(200_000);
        var allocated = GC.GetAllocatedBytesForCurrentThread() - before;

        Assert.Equal(0, allocated);
        Assert.True(counting.Writes - writes >= 20 + 10, $"{counting.Writes - writes} writes"); // 10 closed seconds per series, 5 late merges each
        Assert.Equal(0, sink.Health.LatePoints);
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

/// <summary>A sink that only counts, allocating nothing per point.</summary>
internal sealed class CountingSink : ITimeSeriesSink
{
    private long _writes;

    public long Writes => Interlocked.Read(ref _writes);

    public StorageHealth Health => new() { Backend = "counting", StoreReachable = true };

    public void Write(SeriesKey series, long timestampMs, ReadOnlySpan<double> values) => Interlocked.Increment(ref _writes);

    public Task FlushAsync(CancellationToken ct) => Task.CompletedTask;

    public ValueTask DisposeAsync() => default;
}
