using System.Text;
using System.Text.Json;
using Microsoft.Extensions.DependencyInjection;
using SiloWatch.Integration.Tests.Support;
using SiloWatch.Monitoring;
using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// A silo's pipeline with its wall watch and alarms (the real host's wiring, the demo plant, a fake clock)
/// fed as a worker ten seconds behind would feed it: every message is processed ten seconds after its
/// receipt while the ten received after it wait. Staleness is judged against arrival: no sensor is flagged
/// and no sensor-bad alarm is raised for the backlog; a gateway that stops is flagged once its messages are
/// all processed, and a sensor that stops while the others arrive is flagged under the same backlog.
/// The test drives the pipeline itself (no worker, no broker); the gateway's samples are invented.
/// </summary>
public sealed class ArrivalStalenessThroughThePipelineTests : IAsyncDisposable
{
    private const long BacklogMs = 10_000;
    private const long TransitMs = 40;

    private readonly FakeClockHost _host = new("arrival-0");
    private readonly SiloPipeline _pipeline;
    private readonly SignalSource _source;
    private readonly double _massKg;
    private readonly Queue<(byte[] Payload, long ReceivedMs)> _queue = new();
    private long _seq;

    public ArrivalStalenessThroughThePipelineTests()
    {
        _pipeline = _host.Pipeline("brackenford/S1");
        var model = _host.App.Services.GetRequiredService<SiloModels>().For(_pipeline.Silo);
        _source = new SignalSource(_pipeline.Silo, model);
        _massKg = 0.6 * model.CapacityKg;
    }

    [Fact]
    public void MessagesProcessedTenSecondsAfterTheirReceiptWithMoreQueuedRaiseNoStaleFlagAndNoSensorBadAlarm()
    {
        // Long enough for the sensor-bad delay (60 s by default) to pass twice over.
        for (var s = 0; s < 150; s++)
        {
            Second(s, gatewaySends: true);
            Assert.True(s < 10 || _pipeline.Queued >= 9, $"{_pipeline.Queued} message(s) queued at {s} s");
            Assert.Empty(SensorBadAlarms());
        }

        var now = Now();
        foreach (var sensor in _pipeline.Silo.Sensors)
        {
            Assert.Equal(QualityFlags.None, _pipeline.Monitor.SensorFlags(sensor.Index, now) & QualityFlags.Stale);
        }

        var estimate = Assert.IsType<InventoryEstimate>(_pipeline.LastEstimate);
        Assert.Equal(now, estimate.TimestampMs);
        Assert.NotEqual(Quality.Bad, estimate.Quality);
        Assert.DoesNotContain("stale", estimate.QualityReason, StringComparison.Ordinal);
        Assert.True(Math.Abs(estimate.MassKg - _massKg) < 0.01 * _massKg, $"mass {estimate.MassKg:0} kg, sent {_massKg:0} kg");
    }

    [Fact]
    public void AGatewayThatStopsIsStaleOnTheClockOnceItsMessagesAreProcessedAndItsSensorsRaiseSensorBad()
    {
        const int StopsAt = 40;
        var drainedAt = -1;
        for (var s = 0; s < 150; s++)
        {
            Second(s, gatewaySends: s < StopsAt);
            if (_pipeline.Queued > 0)
            {
                // While its messages wait, the silo is judged at what has arrived: not stale yet.
                Assert.Equal(QualityFlags.None, _pipeline.Monitor.SensorFlags(Sensor("LC1"), Now()) & QualityFlags.Stale);
            }
            else if (drainedAt < 0)
            {
                drainedAt = s;
            }
        }

        Assert.InRange(drainedAt, StopsAt, StopsAt + (BacklogMs / 1000) + 1);
        var now = Now();
        Assert.NotEqual(QualityFlags.None, _pipeline.Monitor.SensorFlags(Sensor("LC1"), now) & QualityFlags.Stale);
        var estimate = Assert.IsType<InventoryEstimate>(_pipeline.LastEstimate);
        Assert.Equal(Quality.Bad, estimate.Quality);
        Assert.Contains("held from the last measurement", estimate.QualityReason, StringComparison.Ordinal);
        Assert.Contains("brackenford/S1/sensor-bad-LC1", SensorBadAlarms());
        Assert.Contains("brackenford/S1/sensor-bad-SG-R1-000", SensorBadAlarms());
    }

    [Fact]
    public void ASensorMissingFromEveryMessageWhileTheOthersArriveIsStaleAndRaisesSensorBadUnderTheBacklog()
    {
        const int StopsAt = 30;
        for (var s = 0; s < 150; s++)
        {
            if (s == StopsAt)
            {
                _source.Silent.Add("SG-R1-120");
            }

            Second(s, gatewaySends: true);
        }

        var now = Now();
        Assert.True(_pipeline.Queued >= 9);
        Assert.NotEqual(QualityFlags.None, _pipeline.Monitor.SensorFlags(Sensor("SG-R1-120"), now) & QualityFlags.Stale);
        Assert.Equal(["brackenford/S1/sensor-bad-SG-R1-120"], SensorBadAlarms());
        foreach (var sensor in _pipeline.Silo.Sensors.Where(x => x.Id != "SG-R1-120"))
        {
            Assert.Equal(QualityFlags.None, _pipeline.Monitor.SensorFlags(sensor.Index, now) & QualityFlags.Stale);
        }
    }

    /// <summary>
    /// Second <paramref name="s"/> of the clock: the gateway's message of that second is received (unless it
    /// has stopped), the messages received ten seconds ago are processed, and the silo is evaluated.
    /// </summary>
    private void Second(int s, bool gatewaySends)
    {
        var nowMs = FakeClockHost.Start.ToUnixTimeMilliseconds() + (s * 1000L) + TransitMs;
        _host.Time.SetUtcNow(DateTimeOffset.FromUnixTimeMilliseconds(nowMs));
        if (gatewaySends)
        {
            _pipeline.Enqueuing();
            _queue.Enqueue((Payload(nowMs - TransitMs), nowMs));
        }

        while (_queue.TryPeek(out var next) && next.ReceivedMs <= nowMs - BacklogMs)
        {
            _queue.Dequeue();
            _pipeline.Process(next.Payload, next.ReceivedMs);
            _pipeline.Dequeued();
        }

        _pipeline.Publish(nowMs, "arrival-0");
    }

    private byte[] Payload(long tsMs)
    {
        var sensors = _pipeline.Silo.Sensors;
        var samples = _source.Scan(_massKg, tsMs).Select(x => new
        {
            sensor = sensors[x.SensorIndex].Id,
            value = Math.Round(x.Value, 7),
            unit = sensors[x.SensorIndex].Options.Unit,
        });
        return Encoding.UTF8.GetBytes(JsonSerializer.Serialize(new { pub = "arrival-gw", seq = ++_seq, ts = tsMs, samples }));
    }

    private long Now() => _host.Time.GetUtcNow().ToUnixTimeMilliseconds();

    private int Sensor(string id) => _pipeline.Silo.Sensors.Single(x => x.Id == id).Index;

    private List<string> SensorBadAlarms() =>
        [.. _pipeline.Alarms!.Active.Where(a => a.InAlarm && a.AlarmId.Contains("/sensor-bad-", StringComparison.Ordinal)).Select(a => a.AlarmId).Order(StringComparer.Ordinal)];

    public ValueTask DisposeAsync() => _host.DisposeAsync();
}
