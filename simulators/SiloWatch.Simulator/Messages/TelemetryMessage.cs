using System.Buffers;
using System.Globalization;
using System.Text.Json;

namespace SiloWatch.Simulator.Messages;

/// <summary>One value of one sensor inside a message; <see cref="Timestamp"/> set only when it differs from the batch's.</summary>
public sealed record SampleValue(string Sensor, double Value, string Unit, DateTimeOffset? Timestamp = null);

/// <summary>
/// One MQTT telemetry message of the service's contract: a batch of one silo's samples on
/// {prefix}/v1/telemetry/{site}/{silo} with the publisher id and a per-publisher, per-silo seq.
/// </summary>
public sealed record TelemetryMessage(string Site, string Silo, string Publisher, long Seq, DateTimeOffset Timestamp, IReadOnlyList<SampleValue> Samples)
{
    public string Topic(string prefix) => $"{prefix}/v1/telemetry/{Site}/{Silo}";

    /// <summary>ISO-8601 UTC with milliseconds, as the contract shows it.</summary>
    public static string FormatTimestamp(DateTimeOffset t) =>
        t.UtcDateTime.ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture);

    /// <summary>The UTF-8 JSON payload: {"pub","seq","ts","samples":[{"sensor","value","unit"[,"ts"]}]}.</summary>
    public byte[] ToPayload()
    {
        var buffer = new ArrayBufferWriter<byte>(64 + (Samples.Count * 56));
        using (var w = new Utf8JsonWriter(buffer))
        {
            w.WriteStartObject();
            w.WriteString("pub", Publisher);
            w.WriteNumber("seq", Seq);
            w.WriteString("ts", FormatTimestamp(Timestamp));
            w.WriteStartArray("samples");
            foreach (var s in Samples)
            {
                w.WriteStartObject();
                w.WriteString("sensor", s.Sensor);
                if (s.Timestamp is { } own)
                {
                    w.WriteString("ts", FormatTimestamp(own));
                }

                w.WriteNumber("value", s.Value);
                w.WriteString("unit", s.Unit);
                w.WriteEndObject();
            }

            w.WriteEndArray();
            w.WriteEndObject();
        }

        return buffer.WrittenSpan.ToArray();
    }
}
