using System.Text.Json;
using System.Text.Json.Serialization;

namespace SiloWatch.Storage;

/// <summary>
/// What a discharge event record carries beyond its columns (stored as <see cref="DischargeEventRecord.DetailsJson"/>):
/// per ring the peak loads against the expected ones, the peak asymmetry and the ring's pattern at that
/// moment, the alarms raised, the data quality, and the expected load profile with depth. Numbers that
/// were not known are null. Written by the service at the end of a discharge, read by the review.
/// </summary>
/// <param name="Format">Version of this document; <see cref="CurrentFormat"/> is written. Events journaled before it have none (0).</param>
/// <param name="CaptureStartMs">First moment of the capture (the pre-start window before the onset).</param>
/// <param name="CaptureEndMs">Last moment of the capture (after the end).</param>
/// <param name="Notes">Anything that limits how far to trust the record (restart during the event, decimated capture …).</param>
public sealed record DischargeEventDetails(
    int Format,
    string Instance,
    string SiloName,
    string Material,
    double MassAtEndKg,
    double DurationS,
    long CaptureStartMs,
    long CaptureEndMs,
    DischargeFactors Factors,
    IReadOnlyList<RingEventDetails> Rings,
    IReadOnlyList<EventAlarm> Alarms,
    EventDataQuality Quality,
    IReadOnlyList<ExpectedWallPoint> ExpectedProfile,
    IReadOnlyList<string> Notes)
{
    public const int CurrentFormat = 1;

    /// <summary>Shared by the writer and the readers: camelCase, NaN as null, enums as text.</summary>
    public static JsonSerializerOptions Json { get; } = new()
    {
        PropertyNamingPolicy = JsonNamingPolicy.CamelCase,
        DefaultIgnoreCondition = JsonIgnoreCondition.Never,
        // A value that should have been null never stops the journal: it is written as "NaN".
        NumberHandling = JsonNumberHandling.AllowNamedFloatingPointLiterals,
        Converters = { new JsonStringEnumConverter(JsonNamingPolicy.CamelCase) },
    };

    public string ToJson() => JsonSerializer.Serialize(this, Json);

    /// <summary>Reads the details of an event; null for an event journaled before details had a format ("{}" or the older summary).</summary>
    /// <exception cref="JsonException">The text is not a details document.</exception>
    public static DischargeEventDetails? FromJson(string json)
    {
        ArgumentNullException.ThrowIfNull(json);
        using var doc = JsonDocument.Parse(json);
        if (doc.RootElement.ValueKind != JsonValueKind.Object || !doc.RootElement.TryGetProperty("format", out var f) || f.ValueKind != JsonValueKind.Number)
        {
            return null;
        }

        return doc.RootElement.Deserialize<DischargeEventDetails>(Json);
    }
}

/// <summary>The discharge factors the expected loads used (from the mechanics library's configured load factors).</summary>
/// <param name="Source">Where they come from and how sure, e.g. "EN 1991-4 §5.2.2 [M?], configurable".</param>
public sealed record DischargeFactors(double HorizontalCh, double FrictionCw, string Source);

/// <summary>One gauge ring over the event.</summary>
/// <param name="Kind">"axial" (membrane force n_z, compression positive) or "hoop" (n_θ, tension positive).</param>
/// <param name="PeakForceKnPerM">Highest ring load (fitted pattern, load sense) during the discharge, kN/m.</param>
/// <param name="ExpectedForceAtPeakKnPerM">Expected discharge load at the ring for the mass at that moment (Janssen with C_h, C_w), kN/m.</param>
/// <param name="MaxMeasuredOverExpected">The wall watch's highest gauge load over the expected discharge load (the excess alarm's index).</param>
/// <param name="MaxA1Ratio">Largest A1/A0 of the change since the pre-discharge baseline.</param>
/// <param name="DirectionAtMaxA1Deg">Where the load rose most at that moment, degrees from the silo's reference mark, clockwise seen from above.</param>
/// <param name="PatternAtMaxA1">The ring's circumferential pattern at the moment of largest A1/A0.</param>
public sealed record RingEventDetails(
    string Ring,
    string Kind,
    double HeightM,
    int Gauges,
    double? PeakForceKnPerM,
    long? PeakForceMs,
    double? ExpectedForceAtPeakKnPerM,
    double? MeanForceAtStartKnPerM,
    double? MaxMeasuredOverExpected,
    double? MaxA1Ratio,
    double? DirectionAtMaxA1Deg,
    double? MaxA2Ratio,
    double? MaxPeakOverMean,
    RingPattern? PatternAtMaxA1);

/// <summary>
/// A ring's circumferential pattern at one moment: the wall watch's fitted harmonics of the change since
/// the baseline (thermally corrected, load sense) and each gauge's own change (not thermally corrected).
/// </summary>
/// <param name="Harmonics">n = 0.. of the fitted change, microstrain; direction of n in degrees from the reference mark.</param>
public sealed record RingPattern(long AtMs, double A1Ratio, double DirectionDeg, IReadOnlyList<PatternHarmonic> Harmonics, IReadOnlyList<GaugeChange> GaugeChanges);

/// <summary>One circumferential harmonic: a_n·cos(nθ) + b_n·sin(nθ), microstrain.</summary>
public sealed record PatternHarmonic(int Order, double Cos, double Sin, double Amplitude, double DirectionDeg)
{
    /// <summary>The harmonics' sum at an angle, degrees from the reference mark.</summary>
    public static double Evaluate(IReadOnlyList<PatternHarmonic> harmonics, double angleDeg)
    {
        ArgumentNullException.ThrowIfNull(harmonics);
        var t = angleDeg * Math.PI / 180.0;
        var sum = 0.0;
        foreach (var h in harmonics)
        {
            sum += h.Order == 0 ? h.Cos : (h.Cos * Math.Cos(h.Order * t)) + (h.Sin * Math.Sin(h.Order * t));
        }

        return sum;
    }
}

/// <param name="ChangeMicro">Change since the baseline in the load sense (axial compression, hoop tension positive); null when the gauge was not usable.</param>
public sealed record GaugeChange(string Sensor, double AngleDeg, double? ChangeMicro);

/// <summary>An alarm raised during the event (from the alarm journal): when, its value then, and where it stood at the end of the event.</summary>
public sealed record EventAlarm(string Alarm, int Priority, long RaisedMs, double? ValueWhenRaised, double? Setpoint, string StateAtEnd, string Message);

/// <summary>How good the data was during the event: shares of sensor readings judged at each evaluation, and the sensors at fault.</summary>
/// <param name="Readings">Sensor readings judged (one per sensor per evaluation).</param>
/// <param name="EstimateGoodShare">Share of evaluations whose inventory estimate was good (the rest uncertain or bad).</param>
public sealed record EventDataQuality(
    long Readings,
    double GoodShare,
    double UncertainShare,
    double BadShare,
    double EstimateGoodShare,
    double EstimateUncertainShare,
    double EstimateBadShare,
    IReadOnlyList<SensorFault> SensorsAtFault);

/// <summary>A sensor not good at some evaluation of the event: for how long, and why (the first reason seen).</summary>
public sealed record SensorFault(string Sensor, long UncertainReadings, long BadReadings, string Reason);

/// <summary>Expected wall loads at one height for the mass at the start of the event (mean properties), kN/m.</summary>
public sealed record ExpectedWallPoint(double HeightM, double DepthM, double FillingAxialKnPerM, double DischargeAxialKnPerM, double? FillingHoopKnPerM, double? DischargeHoopKnPerM);
