using System.Buffers;
using System.Text.Json;
using static SiloWatch.Service.PayloadJson;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Service.Alarms;

/// <summary>JSON of the alarms topic (retained), the events topic and command answers; documented in the README.</summary>
public static class AlarmPayloads
{
    /// <summary>ISA-18.2 state names as the topics and the status page show them, e.g. "returned-to-normal-unacknowledged".</summary>
    public static string StateName(AlarmStateName state) => state switch
    {
        AlarmStateName.Normal => "normal",
        AlarmStateName.Unacknowledged => "unacknowledged",
        AlarmStateName.Acknowledged => "acknowledged",
        AlarmStateName.ReturnedToNormalUnacknowledged => "returned-to-normal-unacknowledged",
        AlarmStateName.Latched => "latched",
        AlarmStateName.Shelved => "shelved",
        AlarmStateName.SuppressedByDesign => "suppressed-by-design",
        AlarmStateName.OutOfService => "out-of-service",
        _ => state.ToString().ToLowerInvariant(),
    };

    public static string DischargeStateName(DischargeState state) => state.ToString().ToLowerInvariant();

    /// <summary>One alarm transition on the events topic.</summary>
    public static byte[] Transition(AlarmTransition t, string instanceId) => Write(w =>
    {
        w.WriteString("type", "alarm-transition");
        w.WriteString("ts", DateTimeOffset.FromUnixTimeMilliseconds(t.TimestampMs));
        w.WriteString("site", t.SiteId);
        w.WriteString("silo", t.SiloId);
        w.WriteString("alarm", t.AlarmId);
        w.WriteString("condition", t.Condition);
        w.WriteNumber("priority", t.Priority);
        w.WriteString("from", StateName(t.From));
        w.WriteString("to", StateName(t.To));
        Number(w, "value", t.Value);
        Number(w, "setpoint", t.Setpoint);
        w.WriteString("unit", t.Unit);
        w.WriteString("by", t.By);
        w.WriteString("comment", t.Comment);
        w.WriteString("message", t.Message);
        w.WriteString("instance", instanceId);
    });

    /// <summary>The active alarms of one silo (retained). An empty list is published as an empty payload, which clears the retained message.</summary>
    public static byte[] Active(string siteId, string siloId, long nowMs, IReadOnlyList<AlarmState> active, string instanceId)
    {
        if (active.Count == 0)
        {
            return [];
        }

        return Write(w =>
        {
            w.WriteString("site", siteId);
            w.WriteString("silo", siloId);
            w.WriteString("ts", DateTimeOffset.FromUnixTimeMilliseconds(nowMs));
            w.WriteNumber("count", active.Count);
            w.WriteNumber("unacknowledged", active.Count(a => !a.Acknowledged));
            w.WriteStartArray("alarms");
            foreach (var a in active)
            {
                w.WriteStartObject();
                WriteState(w, a);
                w.WriteEndObject();
            }

            w.WriteEndArray();
            w.WriteString("instance", instanceId);
        });
    }

    /// <summary>One alarm's state (alarms topic and status page).</summary>
    public static void WriteState(Utf8JsonWriter w, AlarmState a)
    {
        w.WriteString("alarm", a.AlarmId);
        w.WriteString("site", a.SiteId);
        w.WriteString("silo", a.SiloId);
        w.WriteString("condition", a.Condition);
        w.WriteNumber("priority", a.Priority);
        w.WriteString("state", StateName(a.State));
        w.WriteBoolean("inAlarm", a.InAlarm);
        w.WriteBoolean("acknowledged", a.Acknowledged);
        Number(w, "value", a.Value);
        Number(w, "setpoint", a.Setpoint);
        w.WriteString("unit", a.Unit);
        w.WriteString("since", DateTimeOffset.FromUnixTimeMilliseconds(a.SinceMs));
        Time(w, "activated", a.ActivatedMs);
        Time(w, "shelvedUntil", a.ShelvedUntilMs);
        w.WriteString("shelvedBy", a.ShelvedBy);
        w.WriteString("shelveReason", a.ShelveReason);
        w.WriteString("message", a.Message);
    }

    /// <summary>The answer to a command on the events topic: accepted or refused, with why.</summary>
    public static byte[] CommandResult(CommandOutcome outcome, string siteId, string siloId, long nowMs, string instanceId) => Write(w =>
    {
        w.WriteString("type", outcome.Accepted ? "command-accepted" : "command-refused");
        w.WriteString("ts", DateTimeOffset.FromUnixTimeMilliseconds(nowMs));
        w.WriteString("site", siteId);
        w.WriteString("silo", siloId);
        w.WriteString("id", outcome.Command?.Id ?? "");
        w.WriteString("action", outcome.Command?.Action ?? "");
        w.WriteString("alarm", outcome.Command?.AlarmId ?? "");
        w.WriteString("by", outcome.Command?.User ?? "");
        w.WriteString("detail", outcome.Detail);
        w.WriteString("instance", instanceId);
    });

    /// <summary>A change of the discharge state on the events topic.</summary>
    public static byte[] DischargeState(string siteId, string siloId, DischargeStateChange change, double massKg, string instanceId) => Write(w =>
    {
        w.WriteString("type", "discharge-state");
        w.WriteString("ts", DateTimeOffset.FromUnixTimeMilliseconds(change.TimestampMs));
        w.WriteString("site", siteId);
        w.WriteString("silo", siloId);
        w.WriteString("from", DischargeStateName(change.From));
        w.WriteString("to", DischargeStateName(change.To));
        w.WriteString("onset", DateTimeOffset.FromUnixTimeMilliseconds(change.OnsetMs));
        Number(w, "massKg", massKg);
        w.WriteString("reason", change.Reason);
        w.WriteString("instance", instanceId);
    });

    /// <summary>
    /// A finished discharge with its peak indices per ring, on the events topic. Mass out and rates are
    /// the checked <paramref name="figures"/> (the journal's record holds the same): null when the
    /// inventory did not follow the flow, with the reason in "figureNotes".
    /// </summary>
    public static byte[] Discharge(DischargeSummary d, DischargeFigures figures, long eventId, string instanceId) => Write(w =>
    {
        w.WriteString("type", "discharge");
        w.WriteNumber("eventId", eventId);
        w.WriteString("site", d.SiteId);
        w.WriteString("silo", d.SiloId);
        w.WriteString("start", DateTimeOffset.FromUnixTimeMilliseconds(d.OnsetMs));
        w.WriteString("end", DateTimeOffset.FromUnixTimeMilliseconds(d.EndMs));
        Number(w, "massAtStartKg", d.MassAtStartKg);
        Number(w, "massAtEndKg", d.MassAtEndKg);
        w.WriteBoolean("figuresKnown", figures.Known);
        Number(w, "massOutKg", figures.Known ? figures.MassOutKg : null);
        Number(w, "meanRateKgPerS", figures.Known ? figures.MeanRateKgPerS : null);
        Number(w, "peakRateKgPerS", figures.Known ? figures.PeakRateKgPerS : null);
        w.WriteStartArray("figureNotes");
        foreach (var note in figures.Notes)
        {
            w.WriteStringValue(note);
        }

        w.WriteEndArray();
        WriteRings(w, d.Rings);
        w.WriteString("instance", instanceId);
    });

    public static void WriteRings(Utf8JsonWriter w, IReadOnlyList<RingPeak> rings)
    {
        w.WriteStartArray("rings");
        foreach (var r in rings)
        {
            w.WriteStartObject();
            w.WriteString("ring", r.Ring);
            Number(w, "maxA1Ratio", r.MaxA1Ratio);
            Number(w, "directionAtMaxDeg", r.DirectionAtMaxDeg);
            Number(w, "maxA2Ratio", r.MaxA2Ratio);
            Number(w, "maxMeasuredOverExpected", r.MaxMeasuredOverExpected);
            Number(w, "maxPeakOverMean", r.MaxPeakOverMean);
            w.WriteEndObject();
        }

        w.WriteEndArray();
    }

    private static void Time(Utf8JsonWriter w, string name, long? ms)
    {
        if (ms is { } v)
        {
            w.WriteString(name, DateTimeOffset.FromUnixTimeMilliseconds(v));
        }
        else
        {
            w.WriteNull(name);
        }
    }

    private static byte[] Write(Action<Utf8JsonWriter> body)
    {
        var buffer = new ArrayBufferWriter<byte>(512);
        using (var w = new Utf8JsonWriter(buffer))
        {
            w.WriteStartObject();
            body(w);
            w.WriteEndObject();
        }

        return buffer.WrittenSpan.ToArray();
    }
}
