using System.Buffers;
using System.Text.Json;
using SiloWatch.Monitoring;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Service.Alarms;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Service.StatusPage;

/// <summary>
/// The JSON the status page renders: every site of the owned silos with its alarm flood state, and every owned silo
/// with its estimate, quality, rings and active alarms.
/// </summary>
public static class StatusJson
{
    public const string Caution =
        "Monitoring supplements inspection; it does not replace it, and these alarms are not a safety function. " +
        "Alarm limits are set by a licensed structural engineer under the local code. On a wall-load alarm stop or slow the discharge " +
        "as the site procedure says and keep people clear of the silo. Never enter a silo.";

    /// <param name="floods">The shared flood count of the sites (null when alarms are not evaluated: no site is in flood).</param>
    public static string Status(IEnumerable<SiloPipeline> pipelines, string instanceId, long nowMs, string? user, AlarmFloodTracker? floods)
    {
        var ordered = pipelines.OrderBy(p => p.Silo.Index).ToList();
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

            w.WriteStartArray("sites");
            foreach (var site in ordered.GroupBy(p => p.Silo.SiteId, StringComparer.Ordinal))
            {
                WriteSite(w, site.First().Silo.Site, site.Count(), floods);
            }

            w.WriteEndArray();
            w.WriteStartArray("silos");
            foreach (var p in ordered)
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

    /// <summary>
    /// One site: how many of its silos this instance watches and whether the site is in an alarm flood, with the
    /// activations counted in the flood window (the same figure as the flood's entry in the alarm list).
    /// </summary>
    private static void WriteSite(Utf8JsonWriter w, SiloWatch.Plant.SiteOptions site, int silos, AlarmFloodTracker? floods)
    {
        var flood = floods?.Active(site.Id);
        w.WriteStartObject();
        w.WriteString("site", site.Id);
        w.WriteString("name", site.Name);
        w.WriteNumber("silos", silos);
        w.WriteBoolean("flood", flood is not null);
        if (flood is null)
        {
            w.WriteNull("floodAlarms");
            w.WriteNull("floodSince");
        }
        else
        {
            PayloadJson.Number(w, "floodAlarms", flood.Value);
            w.WriteString("floodSince", DateTimeOffset.FromUnixTimeMilliseconds(flood.SinceMs));
        }

        if (floods is null)
        {
            w.WriteNull("floodWindowMin");
        }
        else
        {
            w.WriteNumber("floodWindowMin", floods.Options.FloodWindow.TotalMinutes);
        }

        w.WriteEndObject();
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
