using System.Globalization;
using System.Text.Json;
using SiloWatch.Storage;

namespace SiloWatch.Review;

/// <summary>One discharge event as the review sees it: the journal row, its details and its capture (either may be missing for old events).</summary>
public sealed record ReviewedEvent(DischargeEventRecord Record, DischargeEventDetails? Details, EventCapture? Capture)
{
    /// <summary>The caution every review output carries (DOMAIN.md §6 of the project's notes).</summary>
    public const string Caution =
        "Monitoring supplements inspection; it does not replace it, and these figures are not a design check. Limits and load cases are set by a licensed structural engineer under local code. On signs of distress follow the site procedure and keep people clear. Never enter a silo during discharge or with bridged material overhead.";

    public string SiloKey => Record.SiteId + "/" + Record.SiloId;

    /// <summary>Loads an event with its details and capture.</summary>
    /// <exception cref="KeyNotFoundException">The journal has no event of that id.</exception>
    public static ReviewedEvent Load(Journal journal, long id)
    {
        ArgumentNullException.ThrowIfNull(journal);
        var record = journal.GetEvent(id) ?? throw new KeyNotFoundException($"the journal {journal.Path} has no discharge event {id}");
        DischargeEventDetails? details;
        try
        {
            details = DischargeEventDetails.FromJson(record.DetailsJson);
        }
        catch (JsonException)
        {
            details = null;
        }

        return new ReviewedEvent(record, details, journal.LoadCapture(id));
    }

    /// <summary>The ring whose A1/A0 was largest, with its pattern at that moment (null when no ring was assessed).</summary>
    public RingEventDetails? PeakRing =>
        Details?.Rings.Where(r => r.MaxA1Ratio is not null).OrderByDescending(r => r.MaxA1Ratio).FirstOrDefault();

    public static string Time(long ms) => DateTimeOffset.FromUnixTimeMilliseconds(ms).ToString("yyyy-MM-dd HH:mm:ss'Z'", CultureInfo.InvariantCulture);

    public static string Number(double? value, string format, string unit = "")
    {
        if (value is not { } v || !double.IsFinite(v))
        {
            return "n/a";
        }

        var text = v.ToString(format, CultureInfo.InvariantCulture);
        return unit.Length > 0 ? text + " " + unit : text;
    }

    /// <summary>The headline of the event as label/value rows, for the terminal and the report alike.</summary>
    public IReadOnlyList<(string Label, string Value)> Summary()
    {
        var r = Record;
        var d = Details;
        var rows = new List<(string, string)>
        {
            ("event", r.Id.ToString(CultureInfo.InvariantCulture)),
            ("silo", d is null ? SiloKey : $"{SiloKey} ({d.SiloName})"),
            ("material", d?.Material ?? "n/a"),
            ("start", Time(r.StartedMs)),
            ("end", r.EndedMs is { } e ? Time(e) : "in progress"),
            ("duration", r.EndedMs is { } e2 ? Number((e2 - r.StartedMs) / 1000.0, "0", "s") : "n/a"),
            ("mass at start", Number(r.MassAtStartKg / 1000.0, "0.0", "t")),
            ("mass out", Number(r.MassOutKg / 1000.0, "0.0", "t")),
            ("mean rate", Number(r.MeanRateKgPerS * 3.6, "0.0", "t/h")),
            ("peak rate", Number(r.PeakRateKgPerS * 3.6, "0.0", "t/h")),
            ("peak A1/A0", $"{Number(r.MaxAsymmetryRatio, "0.000")} toward {Number(r.AsymmetryDirectionDeg, "0")} deg from the reference mark"),
            ("peak A2/A0", Number(r.MaxA2Ratio, "0.000")),
            ("peak local over mean", Number(r.MaxPeakOverMean, "0.00")),
            ("measured over expected", Number(r.MaxMeasuredOverExpected, "0.00")),
            ("alarms raised", r.AlarmsRaised == 0 ? "none" : $"{r.AlarmsRaised} (highest priority {r.HighestPriority})"),
        };
        if (d is not null)
        {
            var q = d.Quality;
            rows.Add(("sensor readings", $"{Percent(q.GoodShare)} good, {Percent(q.UncertainShare)} uncertain, {Percent(q.BadShare)} bad of {q.Readings}"));
            rows.Add(("inventory estimate", $"{Percent(q.EstimateGoodShare)} good, {Percent(q.EstimateUncertainShare)} uncertain, {Percent(q.EstimateBadShare)} bad"));
            rows.Add(("sensors at fault", q.SensorsAtFault.Count == 0 ? "none" : string.Join(", ", q.SensorsAtFault.Select(f => f.Sensor))));
            rows.Add(("discharge factors", $"C_h = {Number(d.Factors.HorizontalCh, "0.00")}, C_w = {Number(d.Factors.FrictionCw, "0.00")} ({d.Factors.Source})"));
        }
        else
        {
            rows.Add(("details", "not recorded (event journaled before discharge events carried details)"));
        }

        rows.Add(("capture", Capture is null ? "none stored" : $"{Capture.Frames.Count} frames, {Capture.Channels.Count} channels, {Capture.IntervalMs / 1000.0:0.#} s apart"));
        return rows;
    }

    /// <summary>Per ring: the columns of the ring table.</summary>
    public static readonly string[] RingHeader =
        ["ring", "kind", "height m", "gauges", "peak kN/m", "expected kN/m", "peak/expected", "max meas/exp", "max A1/A0", "direction deg", "max A2/A0", "peak/mean"];

    public IReadOnlyList<string[]> RingRows() =>
        Details is null
            ? []
            : [.. Details.Rings.Select(r => new[]
            {
                r.Ring, r.Kind, Number(r.HeightM, "0.00"), r.Gauges.ToString(CultureInfo.InvariantCulture),
                Number(r.PeakForceKnPerM, "0.0"), Number(r.ExpectedForceAtPeakKnPerM, "0.0"),
                Number(r.PeakForceKnPerM / r.ExpectedForceAtPeakKnPerM, "0.00"), Number(r.MaxMeasuredOverExpected, "0.00"),
                Number(r.MaxA1Ratio, "0.000"), Number(r.DirectionAtMaxA1Deg, "0"), Number(r.MaxA2Ratio, "0.000"), Number(r.MaxPeakOverMean, "0.00"),
            })];

    public static readonly string[] AlarmHeader = ["raised", "alarm", "priority", "value when raised", "setpoint", "state at end"];

    public IReadOnlyList<string[]> AlarmRows() =>
        Details is null
            ? []
            : [.. Details.Alarms.Select(a => new[]
            {
                Time(a.RaisedMs), a.Alarm, a.Priority.ToString(CultureInfo.InvariantCulture), Number(a.ValueWhenRaised, "0.###"), Number(a.Setpoint, "0.###"), a.StateAtEnd,
            })];

    public static readonly string[] FaultHeader = ["sensor", "uncertain readings", "bad readings", "first reason"];

    public IReadOnlyList<string[]> FaultRows() =>
        Details is null
            ? []
            : [.. Details.Quality.SensorsAtFault.Select(f => new[]
            {
                f.Sensor, f.UncertainReadings.ToString(CultureInfo.InvariantCulture), f.BadReadings.ToString(CultureInfo.InvariantCulture), f.Reason,
            })];

    private static string Percent(double share) => (share * 100).ToString("0.0", CultureInfo.InvariantCulture) + " %";
}
