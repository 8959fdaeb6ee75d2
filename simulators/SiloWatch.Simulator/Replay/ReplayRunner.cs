using System.Diagnostics;
using System.Globalization;
using SiloWatch.Simulator.Cli;
using SiloWatch.Simulator.Messages;
using SiloWatch.Simulator.Mqtt;
using SiloWatch.Simulator.Output;

namespace SiloWatch.Simulator.Replay;

/// <summary>How to replay a recorded CSV (time,site,silo,sensor,value,unit).</summary>
public sealed class ReplayOptions
{
    public string FilePath { get; set; } = "";

    public string BrokerHost { get; set; } = "127.0.0.1";

    public int BrokerPort { get; set; } = 1883;

    public string? Username { get; set; }

    public string? Password { get; set; }

    public string TopicPrefix { get; set; } = "silowatch";

    /// <summary>1 = the recorded pace; up to 1000 times faster.</summary>
    public double Speed { get; set; } = 1;

    /// <summary>The "pub" of the replayed messages (seq restarts at 1 per silo). Default "replay".</summary>
    public string Publisher { get; set; } = "replay";

    public string? ClientId { get; set; }

    /// <summary>
    /// Shift every timestamp by one offset so that the last sample falls when the replay ends: at ×1 the
    /// timestamps then follow the wall clock, and at any speed none lies in the future. Default false
    /// (the recorded timestamps).
    /// </summary>
    public bool Retime { get; set; }
}

/// <summary>Publishes a recorded CSV again, with the recorded timestamps, at the recorded pace or faster.</summary>
public static class ReplayRunner
{
    public static async Task<SimulationSummary> RunAsync(ReplayOptions options, TextWriter? progress, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(options);
        if (!(options.Speed >= 1 && options.Speed <= SimulatorRunner.MaxSpeed))
        {
            throw new ArgumentOutOfRangeException(nameof(options), options.Speed, $"Speed must be between 1 and {SimulatorRunner.MaxSpeed}");
        }

        if (!File.Exists(options.FilePath))
        {
            throw new FileNotFoundException($"recorded file '{options.FilePath}' not found", options.FilePath);
        }

        var (rows, firstTime, lastTime) = Scan(options.FilePath);
        var totalRows = Math.Max(1, rows);
        var clientId = options.ClientId ?? $"silowatch-replay-{Environment.ProcessId.ToString(CultureInfo.InvariantCulture)}";
        await using var publisher = new MqttPublisher(options.BrokerHost, options.BrokerPort, options.Username, options.Password, clientId, progress);
        progress?.WriteLine($"replaying '{options.FilePath}' ({totalRows} samples) at x{options.Speed.ToString(CultureInfo.InvariantCulture)} to {options.BrokerHost}:{options.BrokerPort}");
        await publisher.ConnectAsync(ct).ConfigureAwait(false);

        var bar = progress is null ? null : new ProgressBar(progress);
        // Retimed: the last sample is due at the end of the replay, (last − first)/speed from now, less a
        // second so that the pacing's millisecond slack can never put a timestamp ahead of the clock.
        var shift = options.Retime ? DateTimeOffset.UtcNow + ((lastTime - firstTime) / options.Speed) - lastTime - TimeSpan.FromSeconds(1) : TimeSpan.Zero;
        var wall = Stopwatch.StartNew();
        long messages = 0, samples = 0;
        DateTimeOffset? first = null;
        var last = DateTimeOffset.MinValue;
        var batch = new List<(string Topic, byte[] Payload)>(1);
        try
        {
            using var reader = new StreamReader(options.FilePath);
            foreach (var recorded in ReadMessages(reader, options.Publisher))
            {
                var message = shift == TimeSpan.Zero ? recorded : recorded with { Timestamp = recorded.Timestamp + shift };
                first ??= message.Timestamp;
                last = message.Timestamp;
                var wait = ((message.Timestamp - first.Value) / options.Speed) - wall.Elapsed;
                if (wait > TimeSpan.FromMilliseconds(1))
                {
                    await Task.Delay(wait, ct).ConfigureAwait(false);
                }

                batch.Clear();
                batch.Add((message.Topic(options.TopicPrefix), message.ToPayload()));
                await publisher.PublishAsync(batch, ct).ConfigureAwait(false);
                messages++;
                samples += message.Samples.Count;
                bar?.Report((double)samples / totalRows, string.Create(CultureInfo.InvariantCulture, $"{messages} msgs, {samples} samples, at {message.Timestamp.UtcDateTime:yyyy-MM-dd HH:mm:ss}Z"));
            }
        }
        catch (OperationCanceledException) when (ct.IsCancellationRequested)
        {
            // A stopped replay reports what it sent.
        }

        bar?.Report(1, $"{messages} msgs, {samples} samples", force: true);
        bar?.Finish();
        var summary = new SimulationSummary(messages, samples, wall.Elapsed, first is null ? TimeSpan.Zero : last - first.Value, 0, 0, 0, 0, publisher.Retries);
        progress?.WriteLine(summary.ToString());
        return summary;
    }

    /// <summary>Rows, earliest and latest time of a recorded file (one pass before the replay, for progress and retiming).</summary>
    private static (long Rows, DateTimeOffset First, DateTimeOffset Last) Scan(string path)
    {
        long rows = 0;
        DateTimeOffset first = DateTimeOffset.MaxValue, last = DateTimeOffset.MinValue;
        using var reader = new StreamReader(path);
        foreach (var m in ReadMessages(reader, "scan"))
        {
            rows += m.Samples.Count;
            first = m.Timestamp < first ? m.Timestamp : first;
            last = m.Timestamp > last ? m.Timestamp : last;
        }

        return rows == 0 ? (0, DateTimeOffset.UnixEpoch, DateTimeOffset.UnixEpoch) : (rows, first, last);
    }

    /// <summary>Groups consecutive rows of one instant and one silo into one message; seq counts per silo from 1.</summary>
    public static IEnumerable<TelemetryMessage> ReadMessages(TextReader reader, string publisher)
    {
        var header = reader.ReadLine();
        if (header is null || !header.Trim().Equals(RecordCsvWriter.Header, StringComparison.Ordinal))
        {
            throw new InvalidDataException($"recorded CSV must start with the header '{RecordCsvWriter.Header}'");
        }

        var seq = new Dictionary<string, long>(StringComparer.Ordinal);
        List<SampleValue>? samples = null;
        string site = "", silo = "";
        var time = DateTimeOffset.MinValue;
        var lineNumber = 1;
        string? line;
        while ((line = reader.ReadLine()) is not null)
        {
            lineNumber++;
            if (line.Length == 0)
            {
                continue;
            }

            var f = line.Split(',');
            if (f.Length != 6)
            {
                throw new InvalidDataException($"recorded CSV line {lineNumber}: expected 6 fields, found {f.Length}");
            }

            if (!DateTimeOffset.TryParse(f[0], CultureInfo.InvariantCulture, DateTimeStyles.AssumeUniversal | DateTimeStyles.AdjustToUniversal, out var t)
                || !double.TryParse(f[4], NumberStyles.Float, CultureInfo.InvariantCulture, out var value))
            {
                throw new InvalidDataException($"recorded CSV line {lineNumber}: bad time '{f[0]}' or value '{f[4]}'");
            }

            if (samples is not null && (t != time || f[1] != site || f[2] != silo))
            {
                yield return Message();
                samples = null;
            }

            if (samples is null)
            {
                samples = [];
                time = t;
                site = f[1];
                silo = f[2];
            }

            samples.Add(new SampleValue(f[3], value, f[5]));
        }

        if (samples is not null)
        {
            yield return Message();
        }

        TelemetryMessage Message()
        {
            var key = site + "/" + silo;
            seq[key] = seq.GetValueOrDefault(key) + 1;
            return new TelemetryMessage(site, silo, publisher, seq[key], time, samples!);
        }
    }
}
