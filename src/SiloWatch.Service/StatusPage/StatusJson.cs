using System.Buffers;
using System.Text.Json;
using SiloWatch.Monitoring;
using SiloWatch.Service.Alarms;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Service.StatusPage;

/// <summary>The JSON the status page renders: every owned silo with its estimate, quality, rings and active alarms.</summary>
public static class StatusJson
{
    public const string Caution =
        "Monitoring supplements inspection; it does not replace it, and these alarms are not a safety function. " +
        "Alarm limits are set by a licensed structural engineer under the local code. On a wall-load alarm stop or slow the discharge " +
        "as the site procedure says and keep people clear of the silo. Never enter a silo.";

    public static string Status(IEnumerable<SiloPipeline> pipelines, string instanceId, long nowMs, string? user)
    {
        var buffer = new ArrayBufferWriter<byte>(8192);
        using (var w = new Utf8JsonWriter(buffer))
        {
            w.WriteStartObject();
            w.WriteString("instance", instanceId);
            w.WriteString("generated", DateTimeOffset.FromUnixTimeMilliseconds(nowMs));
            w.WriteString("caution", Caution);
            if (user is null)
            {
                w.WriteNull("user");
            }
            else
            {
                w.WriteString("user", user);
            }

            w.WriteStartArray("silos");
            foreach (var p in pipelines.OrderBy(p => p.Silo.Index))
            {
                WriteSilo(w, p);
            }

            w.WriteEndArray();
            w.WriteEndObject();
        }

        return System.Text.Encoding.UTF8.GetString(buffer.WrittenSpan);
    }

    public static string Alarms(IEnumerable<SiloPipeline> pipelines)
    {
        var buffer = new ArrayBufferWriter<byte>(4096);
        using (var w = new Utf8JsonWriter(buffer))
        {
            w.WriteStartArray();
            foreach (var p in pipelines)
            {
                if (p.Alarms is not { } alarms)
                {
                    continue;
                }

                foreach (var a in alarms.Active)
                {
                    w.WriteStartObject();
                    AlarmPayloads.WriteState(w, a);
                    w.WriteEndObject();
                }
            }

            w.WriteEndArray();
        }

        return System.Text.Encoding.UTF8.GetString(buffer.WrittenSpan);
    }

    private static void WriteSilo(Utf8JsonWriter w, SiloPipeline p)
    {
        var status = p.Alarms?.Status;
        var e = status?.Estimate ?? p.LastEstimate;
        w.WriteStartObject();
        w.WriteString("site", p.Silo.SiteId);
        w.WriteString("silo", p.Silo.SiloId);
        w.WriteString("name", p.Silo.Options.Name);
        w.WriteString("material", p.Silo.Options.Material);
        if (e is null)
        {
            w.WriteNull("ts");
            w.WriteString("quality", "bad");
            w.WriteString("reason", "no estimate yet");
        }
        else
        {
            w.WriteString("ts", DateTimeOffset.FromUnixTimeMilliseconds(e.TimestampMs));
            w.WriteString("quality", e.Quality.ToString().ToLowerInvariant());
            w.WriteString("reason", e.QualityReason);
            w.WriteString("method", e.Method);
            PayloadJson.Number(w, "massKg", e.MassKg);
            PayloadJson.Number(w, "massLow95Kg", e.MassLow95Kg);
            PayloadJson.Number(w, "massHigh95Kg", e.MassHigh95Kg);
            PayloadJson.Number(w, "levelM", e.LevelM);
            PayloadJson.Number(w, "percentFull", e.PercentFull);
            PayloadJson.Number(w, "rateKgPerS", e.RateKgPerS);
            PayloadJson.Number(w, "timeToEmptyS", e.TimeToEmptyS);
            PayloadJson.Number(w, "timeToFullS", e.TimeToFullS);
        }

        w.WriteString("discharge", status is null ? "unknown" : AlarmPayloads.DischargeStateName(status.DischargeState));
        w.WriteStartArray("rings");
        foreach (var r in status?.Rings ?? [])
        {
            w.WriteStartObject();
            w.WriteString("ring", r.Ring);
            w.WriteNumber("goodGauges", r.GoodGauges);
            w.WriteNumber("gauges", r.Gauges);
            PayloadJson.Number(w, "a1Ratio", r.A1Ratio);
            PayloadJson.Number(w, "directionDeg", r.DirectionDeg);
            PayloadJson.Number(w, "measuredOverExpected", r.MeasuredOverExpected);
            w.WriteString("note", r.Note);
            w.WriteEndObject();
        }

        w.WriteEndArray();
        w.WriteStartArray("alarms");
        foreach (var a in status?.Alarms ?? [])
        {
            w.WriteStartObject();
            AlarmPayloads.WriteState(w, a);
            w.WriteEndObject();
        }

        w.WriteEndArray();
        w.WriteEndObject();
    }
}
