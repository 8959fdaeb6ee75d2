using System.Globalization;
using BenchmarkDotNet.Attributes;
using BenchmarkDotNet.Columns;
using BenchmarkDotNet.Configs;
using BenchmarkDotNet.Jobs;
using BenchmarkDotNet.Toolchains.InProcess.Emit;
using InfluxDB.Client;
using InfluxDB.Client.Api.Domain;
using Microsoft.Extensions.Logging.Abstractions;
using SiloWatch.Storage;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Points per second into a real store (VictoriaMetrics or InfluxDB at SILOWATCH_BENCH_VM_URL, else
/// SILOWATCH_TEST_VM_URL): SiloWatch's <see cref="InfluxTimeSeriesSink"/> (Write per point from the
/// caller, batching and sending on its writer thread, then FlushAsync) beside a bare InfluxDB.Client
/// loop that formats line protocol strings and awaits WriteRecordsAsync per batch of the same size.
/// One op = one point; the Op/s column is points per second. Goal: the sink at least 0.8 of the bare
/// client. Run: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- --filter '*StorageBenchmarks*'
/// </summary>
[Config(typeof(Config))]
public class StorageBenchmarks
{
    private const int Points = 200_000;
    private const int BatchSize = 5000;
    private const int SeriesCount = 100;

    private SeriesKey[] _series = [];
    private InfluxDBClient _client = null!;
    private WriteApiAsync _writeApi = null!;
    private InfluxTimeSeriesSink _sink = null!;
    private string _spool = "";
    private long _nextTimestampMs;

    [GlobalSetup]
    public void Setup()
    {
        var url = Environment.GetEnvironmentVariable("SILOWATCH_BENCH_VM_URL") is { Length: > 0 } u ? u
            : Environment.GetEnvironmentVariable("SILOWATCH_TEST_VM_URL") is { Length: > 0 } t ? t
            : throw new InvalidOperationException("set SILOWATCH_BENCH_VM_URL to a store taking /api/v2/write, e.g. a local victoria-metrics");
        var run = "bench" + Guid.NewGuid().ToString("N")[..8];
        // 20 silos x 5 sensors, the shape of a mid-sized plant.
        _series = [.. Enumerable.Range(0, SeriesCount).Select(i => new SeriesKey(
            Measurements.Sensor,
            [new(Tags.Site, "bench"), new(Tags.Silo, "S" + (i / 5)), new(Tags.Sensor, "LC" + (i % 5)), new(Tags.Kind, "LoadCell"), new("run", run)],
            SensorFields.All))];
        _client = new InfluxDBClient(new InfluxDBClientOptions(url) { Org = "bench", Bucket = "bench" });
        _writeApi = _client.GetWriteApiAsync();
        _spool = Path.Combine(Path.GetTempPath(), "silowatch-bench-spool-" + run);
        _sink = new InfluxTimeSeriesSink(
            new TimeSeriesOptions { Url = url, Org = "bench", Bucket = "bench", BatchSize = BatchSize, SpoolDirectory = _spool, BufferCapacityPoints = 400_000 },
            TimeProvider.System,
            NullLogger<InfluxTimeSeriesSink>.Instance,
            token: "");
        _nextTimestampMs = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() - (long)TimeSpan.FromDays(1).TotalMilliseconds;
    }

    [GlobalCleanup]
    public async Task Cleanup()
    {
        var health = _sink.Health;
        await _sink.DisposeAsync();
        _client.Dispose();
        Directory.Delete(_spool, recursive: true);
        Console.WriteLine($"// sink health at the end: {health}");
    }

    [Benchmark(Baseline = true, OperationsPerInvoke = Points)]
    public async Task BareClientWriteRecords()
    {
        var lines = new List<string>(BatchSize);
        for (var i = 0; i < Points; i++)
        {
            var s = _series[i % SeriesCount];
            var ts = _nextTimestampMs++;
            double raw = i * 0.001, value = i * 0.5;
            lines.Add(string.Create(CultureInfo.InvariantCulture, $"{s.LinePrefix}raw={raw},value={value},quality=0 {ts}"));
            if (lines.Count == BatchSize)
            {
                await _writeApi.WriteRecordsAsync(lines, WritePrecision.Ms, "bench", "bench");
                lines.Clear();
            }
        }

        if (lines.Count > 0)
        {
            await _writeApi.WriteRecordsAsync(lines, WritePrecision.Ms, "bench", "bench");
        }
    }

    [Benchmark(OperationsPerInvoke = Points)]
    public async Task SinkWriteAndFlush()
    {
        Span<double> values = stackalloc double[3];
        for (var i = 0; i < Points; i++)
        {
            values[0] = i * 0.001;
            values[1] = i * 0.5;
            values[2] = 0;
            _sink.Write(_series[i % SeriesCount], _nextTimestampMs++, values);
        }

        await _sink.FlushAsync(CancellationToken.None);
        if (_sink.HasSpooledPoints)
        {
            throw new InvalidOperationException("the store fell behind into the spool: " + _sink.Health);
        }
    }

    private sealed class Config : ManualConfig
    {
        public Config()
        {
            // In process: the store is a live server, and a separate build per run adds nothing here.
            AddJob(Job.Default.WithToolchain(InProcessEmitToolchain.Instance).WithWarmupCount(2).WithIterationCount(8).WithInvocationCount(1).WithUnrollFactor(1));
            AddColumn(StatisticColumn.OperationsPerSecond);
            WithOptions(ConfigOptions.DisableOptimizationsValidator);
        }
    }
}
