using System.Globalization;
using System.Text;
using BenchmarkDotNet.Attributes;
using BenchmarkDotNet.Columns;
using BenchmarkDotNet.Configs;
using BenchmarkDotNet.Reports;
using BenchmarkDotNet.Running;
using SiloWatch.Messaging;
using SiloWatch.Plant;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Decode-and-route of telemetry on one core: topic → silo (allocation-free key lookup) → that
/// silo's <see cref="TelemetryDecoder"/> → a receiver that sums the values. One op = one message of
/// <see cref="SamplesPerMessage"/> samples; the "Samples/s" column is samples per op / mean.
/// Goal: at least 2,000,000 samples/s per core on 50-sample batches. Payloads cycle through 4096
/// increasing seqs so the sequence check sees in-order traffic (one Reset per wrap).
/// </summary>
[MemoryDiagnoser]
[Config(typeof(SamplesPerSecondConfig))]
public class DecodeBenchmarks
{
    private const int Distinct = 4096;
    private static readonly string[] Sensors = ["LC1", "LC2", "LC3", "LC4", "SG-R1-000", "SG-R1-060", "T-R1-000"];

    private PlantRegistry _registry = null!;
    private TopicScheme _topics = null!;
    private TelemetryDecoder[] _decoders = [];
    private byte[][] _payloads = [];
    private string _topic = "";
    private long _nowMs;
    private int _next;
    private readonly SummingReceiver _receiver = new();

    /// <summary>1 = the single-sample form, 50 = a batch.</summary>
    [Params(1, 50)]
    public int SamplesPerMessage { get; set; }

    [GlobalSetup]
    public void Setup()
    {
        var (plant, findings) = PlantLoader.LoadFile(Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json"));
        if (findings.Count > 0)
        {
            throw new InvalidOperationException("demo plant: " + string.Join("; ", findings));
        }

        _registry = new PlantRegistry(plant);
        _topics = new TopicScheme("silowatch");
        _decoders = [.. _registry.Silos.Select(s => new TelemetryDecoder(s, new TelemetryDecoderOptions()))];
        _topic = _topics.Telemetry("brackenford", "S1");
        var ts = new DateTimeOffset(2026, 12, 1, 10, 15, 2, 250, TimeSpan.Zero);
        _nowMs = ts.ToUnixTimeMilliseconds() + 1000;
        _payloads = [.. Enumerable.Range(1, Distinct).Select(seq => Payload(seq, ts))];

        // A benchmark of rejections would flatter the figures: every sample must be accepted.
        var probe = new TelemetryDecoder(_registry.Silos[0], new TelemetryDecoderOptions());
        var check = probe.Decode(_payloads[0], _nowMs, _receiver);
        if (check.Accepted != SamplesPerMessage || _receiver.Rejected != 0)
        {
            throw new InvalidOperationException($"benchmark payload not fully accepted: {check}");
        }
    }

    [Benchmark]
    public int DecodeAndRoute()
    {
        var payload = _payloads[_next];
        _next = (_next + 1) & (Distinct - 1);
        if (!_topics.TryGetTelemetrySiloKey(_topic, out var key) || !_registry.TryGetSilo(key, out var silo))
        {
            throw new InvalidOperationException("routing failed");
        }

        return _decoders[silo.Index].Decode(payload, _nowMs, _receiver).Accepted;
    }

    private byte[] Payload(int seq, DateTimeOffset ts)
    {
        var json = new StringBuilder(64 * SamplesPerMessage);
        if (SamplesPerMessage == 1)
        {
            json.Append(CultureInfo.InvariantCulture,
                $$"""{"pub":"gw-east-1","seq":{{seq}},"ts":"{{ts:yyyy-MM-dd'T'HH:mm:ss.fff'Z'}}","sensor":"LC1","value":1.2345,"unit":"mV/V"}""");
        }
        else
        {
            // Batch ts as epoch ms, every fifth sample with its own ISO ts: both parsers are on the path.
            json.Append(CultureInfo.InvariantCulture, $$"""{"pub":"gw-east-1","seq":{{seq}},"ts":{{ts.ToUnixTimeMilliseconds()}},"samples":[""");
            for (var i = 0; i < SamplesPerMessage; i++)
            {
                var sensor = Sensors[i % Sensors.Length];
                var unit = sensor.StartsWith("T-", StringComparison.Ordinal) ? "degC" : "mV/V";
                var value = unit == "degC" ? 11.5 + (i * 0.01) : 1.2345 + (i * 0.001);
                json.Append(i == 0 ? "" : ",");
                json.Append(CultureInfo.InvariantCulture, $$"""{"sensor":"{{sensor}}",""");
                if (i % 5 == 4)
                {
                    json.Append(CultureInfo.InvariantCulture, $$"""
                        "ts":"{{ts.AddMilliseconds(-i):yyyy-MM-dd'T'HH:mm:ss.fff'Z'}}",
                        """);
                }

                json.Append(CultureInfo.InvariantCulture, $$"""
                    "value":{{value:R}},"unit":"{{unit}}"}
                    """);
            }

            json.Append("]}");
        }

        return Encoding.UTF8.GetBytes(json.ToString());
    }

    private sealed class SummingReceiver : ITelemetryReceiver
    {
        public double Sum { get; private set; }

        public int Rejected { get; private set; }

        public void OnSample(in TelemetrySample sample) => Sum += sample.Value;

        public void OnRejected(TelemetryRejection rejection) => Rejected++;
    }

    private sealed class SamplesPerSecondConfig : ManualConfig
    {
        public SamplesPerSecondConfig() => AddColumn(new SamplesPerSecondColumn());
    }

    /// <summary>Samples per second per core: the SamplesPerMessage parameter divided by the mean time per op.</summary>
    private sealed class SamplesPerSecondColumn : IColumn
    {
        public string Id => nameof(SamplesPerSecondColumn);

        public string ColumnName => "Samples/s";

        public bool AlwaysShow => true;

        public ColumnCategory Category => ColumnCategory.Custom;

        public int PriorityInCategory => 0;

        public bool IsNumeric => true;

        public UnitType UnitType => UnitType.Dimensionless;

        public string Legend => "Samples decoded per second on one core (samples per op / mean)";

        public string GetValue(Summary summary, BenchmarkCase benchmarkCase)
        {
            var report = summary[benchmarkCase];
            var parameter = benchmarkCase.Parameters[nameof(SamplesPerMessage)];
            if (report?.ResultStatistics is not { } stats || parameter is not int samples || stats.Mean <= 0)
            {
                return "n/a";
            }

            return (samples / (stats.Mean * 1e-9)).ToString("N0", CultureInfo.InvariantCulture);
        }

        public string GetValue(Summary summary, BenchmarkCase benchmarkCase, SummaryStyle style) => GetValue(summary, benchmarkCase);

        public bool IsDefault(Summary summary, BenchmarkCase benchmarkCase) => false;

        public bool IsAvailable(Summary summary) => true;
    }
}
