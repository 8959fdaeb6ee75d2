using System.Buffers;
using System.Text.Json;
using static SiloWatch.Service.PayloadJson;
using SiloWatch.Monitoring;

namespace SiloWatch.Service.Ingest;

/// <summary>The retained per-silo state message (JSON), documented in the README.</summary>
public static class StatePayload
{
    /// <param name="e">The estimate.</param>
    /// <param name="instanceId">This instance.</param>
    /// <param name="newestSampleMs">Timestamp of the newest sample the estimate includes ("sampleTs", null when none yet):
    /// it ties an estimate to the telemetry that produced it, e.g. to measure the latency end to end.</param>
    public static byte[] Encode(InventoryEstimate e, string instanceId, long? newestSampleMs = null)
    {
        var buffer = new ArrayBufferWriter<byte>(768);
        using (var w = new Utf8JsonWriter(buffer))
        {
            w.WriteStartObject();
            w.WriteString("site", e.SiteId);
            w.WriteString("silo", e.SiloId);
            w.WriteString("ts", DateTimeOffset.FromUnixTimeMilliseconds(e.TimestampMs));
            if (newestSampleMs is { } sampleMs)
            {
                w.WriteString("sampleTs", DateTimeOffset.FromUnixTimeMilliseconds(sampleMs));
            }
            else
            {
                w.WriteNull("sampleTs");
            }

            w.WriteString("quality", e.Quality.ToString().ToLowerInvariant());
            w.WriteString("reason", e.QualityReason);
            w.WriteString("method", e.Method);
            Number(w, "massKg", e.MassKg);
            Number(w, "massLow95Kg", e.MassLow95Kg);
            Number(w, "massHigh95Kg", e.MassHigh95Kg);
            Number(w, "levelM", e.LevelM);
            Number(w, "levelLow95M", e.LevelLow95M);
            Number(w, "levelHigh95M", e.LevelHigh95M);
            Number(w, "volumeM3", e.VolumeM3);
            Number(w, "percentFull", e.PercentFull);
            Number(w, "rateKgPerS", e.RateKgPerS);
            Number(w, "rateLow95KgPerS", e.RateLow95KgPerS);
            Number(w, "rateHigh95KgPerS", e.RateHigh95KgPerS);
            Number(w, "timeToEmptyS", e.TimeToEmptyS);
            Number(w, "timeToFullS", e.TimeToFullS);
            w.WriteString("instance", instanceId);
            w.WriteEndObject();
        }

        return buffer.WrittenSpan.ToArray();
    }
}
