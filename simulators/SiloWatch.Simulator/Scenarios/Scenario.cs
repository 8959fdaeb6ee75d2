using System.Text.Json;
using System.Text.Json.Serialization;

namespace SiloWatch.Simulator.Scenarios;

/// <summary>
/// A scenario file (simulators/scenarios/*.json, JSON with // comments; format in simulators/README.md):
/// the initial state of the silos, the weather, and a timed list of events.
/// </summary>
public sealed class Scenario
{
    public string Name { get; set; } = "";

    public string Description { get; set; } = "";

    /// <summary>Fixed start of simulated time for runs above ×1 (keeps them independent of the wall clock).</summary>
    public DateTimeOffset? Start { get; set; }

    /// <summary>Length of one pass of the scenario.</summary>
    public TimeSpan Duration { get; set; } = TimeSpan.FromHours(1);

    /// <summary>One MQTT message per silo per sample period. Default 1 s.</summary>
    public TimeSpan SamplePeriod { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>Interval of the ground-truth rows (plus a row at every change of state). Default 10 s.</summary>
    public TimeSpan TruthInterval { get; set; } = TimeSpan.FromSeconds(10);

    /// <summary>The "pub" field of every message (the simulated gateway). Default "sim-gw-1".</summary>
    public string Publisher { get; set; } = "sim-gw-1";

    public WeatherSettings Weather { get; set; } = new();

    public NoiseSettings Noise { get; set; } = new();

    public DischargeSettings Discharge { get; set; } = new();

    public NetworkSettings Network { get; set; } = new();

    public List<SiloSetup> Silos { get; set; } = [];

    public List<ScenarioEvent> Events { get; set; } = [];
}

public sealed class WeatherSettings
{
    /// <summary>Daily mean air temperature, degC.</summary>
    public double AirMeanC { get; set; } = 12;

    /// <summary>Half the day–night swing of air temperature, K (peak at 15:00 local).</summary>
    public double AirSwingC { get; set; } = 5;

    /// <summary>Local time of sunrise and sunset, hours; the sun's azimuth runs 90°→270° between them.</summary>
    public double SunriseHour { get; set; } = 6;

    public double SunsetHour { get; set; } = 18;

    /// <summary>Warming of the shell facing the sun at full sun, K.</summary>
    public double SunWarmingK { get; set; } = 10;

    /// <summary>0 clear sky … 1 overcast (scales the sun's warming).</summary>
    public double Cloudiness { get; set; } = 0.2;

    /// <summary>
    /// Passing clouds per hour: at each, the sky turns from clear to shaded or back, and the sunlight eases to its new
    /// level over about a minute. Default 0 (the sky stays as <see cref="Cloudiness"/> says).
    /// </summary>
    public double PassingCloudsPerHour { get; set; }

    /// <summary>Share of the sunlight a passing cloud takes away, 0..1. Default 0.8.</summary>
    public double CloudShade { get; set; } = 0.8;

    /// <summary>Time constant of the shell's temperature, s.</summary>
    public double ShellTimeConstantS { get; set; } = 600;

    /// <summary>Apparent axial strain per K of sun-side warming from the restrained bowing of the shell, microstrain/K (invented).</summary>
    public double SolarBowMicroPerK { get; set; } = 2.0;

    public double WindMeanMs { get; set; } = 4;

    /// <summary>Direction the wind comes from, degrees clockwise from the reference mark (north).</summary>
    public double WindFromDeg { get; set; } = 240;

    /// <summary>Random gusts per hour (besides Gust events) and their peak increase, m/s.</summary>
    public double GustsPerHour { get; set; } = 4;

    public double GustMs { get; set; } = 8;

    /// <summary>Fraction of free-ring ovalisation bending that reaches the gauges (roof, stiffeners, contents), invented.</summary>
    public double OvalisationRestraint { get; set; } = 0.05;
}

public sealed class NoiseSettings
{
    /// <summary>Standard deviation of load-cell noise, mV/V.</summary>
    public double LoadCellMvPerV { get; set; } = 0.00005;

    /// <summary>Standard deviation of strain-gauge noise, microstrain.</summary>
    public double StrainMicro { get; set; } = 0.5;

    /// <summary>Standard deviation of temperature noise, K.</summary>
    public double TemperatureK { get; set; } = 0.05;

    /// <summary>Random-walk zero drift of load cells, mV/V per √day.</summary>
    public double LoadCellZeroDriftMvPerVPerSqrtDay { get; set; } = 0.0002;

    /// <summary>Relative fluctuation of delivery and discharge rates.</summary>
    public double FlowRateJitter { get; set; } = 0.05;
}

public sealed class DischargeSettings
{
    /// <summary>Discharge factor on the normal wall pressure [M?: EN 1991-4 §5.2.1.2, verify]. Default 1.15.</summary>
    public double Ch { get; set; } = 1.15;

    /// <summary>Discharge factor on wall friction [M?: EN 1991-4 §5.2.1.2, verify]. Default 1.10.</summary>
    public double Cw { get; set; } = 1.10;

    /// <summary>Time for the discharge pressures to build up after the outlet opens (and to relax after it closes), s.</summary>
    public double SwitchSeconds { get; set; } = 20;
}

public sealed class NetworkSettings
{
    /// <summary>Probability that a message is published twice (same seq).</summary>
    public double DuplicateProbability { get; set; }

    /// <summary>Probability that a message is held back and sent after the next one of its silo.</summary>
    public double ReorderProbability { get; set; }
}

public sealed class SiloSetup
{
    /// <summary>Site id; may be left out when the plant has one site.</summary>
    public string Site { get; set; } = "";

    public string Silo { get; set; } = "";

    /// <summary>Initial contents, percent of the silo's volume capacity.</summary>
    public double InitialFillPercent { get; set; }

    /// <summary>Bulk unit weight of the stored solid; default the mean of the library's lower and upper values.</summary>
    public double? UnitWeightKnM3 { get; set; }

    /// <summary>Offset of the heap's apex from the axis at the start, as a fraction of the radius, and its azimuth.</summary>
    public double HeapOffsetRatio { get; set; }

    public double HeapOffsetAzimuthDeg { get; set; }
}

[JsonConverter(typeof(JsonStringEnumConverter<ScenarioEventType>))]
public enum ScenarioEventType
{
    /// <summary>Material in: MassKg in Batches (truck = 1, rail = one per wagon) at RateKgPerS, BatchGap apart.</summary>
    Delivery,

    /// <summary>Material out: MassKg (or until empty) at RateKgPerS; with ChannelAzimuthDeg an eccentric flow channel.</summary>
    Discharge,

    /// <summary>Stops any delivery and discharge of the silo.</summary>
    Stop,

    /// <summary>A sensor fault (Fault = Dead, Stuck, Drift, Spikes, Noisy) for Duration (or to the end).</summary>
    Fault,

    /// <summary>No messages from the site for Duration: they are lost (seq still counts up).</summary>
    Dropout,

    /// <summary>The gateway's link is down for Duration: it buffers, then sends everything at once on reconnect.</summary>
    Outage,

    /// <summary>A wind gust of GustMs over Duration (default 15 s), from WindFromDeg if given.</summary>
    Gust,
}

[JsonConverter(typeof(JsonStringEnumConverter<FaultKind>))]
public enum FaultKind
{
    /// <summary>The sensor stops sending (or sends 0 with SendZero).</summary>
    Dead,

    /// <summary>The value freezes at what it was when the fault began.</summary>
    Stuck,

    /// <summary>A slow ramp of DriftPerHour (in the sensor's unit) is added.</summary>
    Drift,

    /// <summary>Random spikes of SpikeSize (sensor's unit), SpikesPerMinute on average.</summary>
    Spikes,

    /// <summary>Noise multiplied by NoiseFactor.</summary>
    Noisy,
}

public sealed class ScenarioEvent
{
    /// <summary>Time from the start of the scenario.</summary>
    public TimeSpan At { get; set; }

    public ScenarioEventType Type { get; set; }

    public string Site { get; set; } = "";

    public string Silo { get; set; } = "";

    public string Sensor { get; set; } = "";

    /// <summary>Free text for the truth file (e.g. "truck 4711", "rail, 4 wagons").</summary>
    public string Note { get; set; } = "";

    public double MassKg { get; set; }

    public double RateKgPerS { get; set; }

    public int Batches { get; set; } = 1;

    public TimeSpan BatchGap { get; set; } = TimeSpan.FromMinutes(3);

    /// <summary>Delivery: where the stream lands, fraction of the radius from the axis, and its azimuth.</summary>
    public double FillOffsetRatio { get; set; }

    public double FillAzimuthDeg { get; set; }

    /// <summary>Discharge: azimuth of an eccentric flow channel against the wall (none if not set).</summary>
    public double? ChannelAzimuthDeg { get; set; }

    /// <summary>Flow channel radius as a fraction of the silo radius (EN 1991-4's k; default 0.5).</summary>
    public double ChannelRadiusRatio { get; set; } = 0.5;

    /// <summary>Distance of the channel's centre from the axis as a fraction of the radius (default 0.7).</summary>
    public double ChannelEccentricityRatio { get; set; } = 0.7;

    public FaultKind Fault { get; set; }

    public TimeSpan? Duration { get; set; }

    public bool SendZero { get; set; }

    public double DriftPerHour { get; set; }

    public double SpikeSize { get; set; }

    public double SpikesPerMinute { get; set; } = 2;

    public double NoiseFactor { get; set; } = 10;

    public double GustMs { get; set; }

    public double? WindFromDeg { get; set; }
}

public static class ScenarioLoader
{
    private static readonly JsonSerializerOptions Options = new()
    {
        ReadCommentHandling = JsonCommentHandling.Skip,
        AllowTrailingCommas = true,
        PropertyNameCaseInsensitive = true,
        UnmappedMemberHandling = JsonUnmappedMemberHandling.Disallow,
        Converters = { new LenientTimeSpanConverter() },
    };

    public static Scenario LoadFile(string path)
    {
        try
        {
            using var stream = File.OpenRead(path);
            return Parse(stream);
        }
        catch (JsonException ex)
        {
            throw new InvalidDataException($"scenario '{path}': {ex.Message}", ex);
        }
    }

    public static Scenario Parse(Stream json) =>
        JsonSerializer.Deserialize<Scenario>(json, Options) ?? throw new InvalidDataException("scenario: empty document");

    public static Scenario Parse(string json) =>
        JsonSerializer.Deserialize<Scenario>(json, Options) ?? throw new InvalidDataException("scenario: empty document");
}

/// <summary>TimeSpan as "hh:mm:ss" (hours may exceed 23, e.g. "24:00:00") or .NET's "d.hh:mm:ss".</summary>
public sealed class LenientTimeSpanConverter : JsonConverter<TimeSpan>
{
    public override TimeSpan Read(ref Utf8JsonReader reader, Type typeToConvert, JsonSerializerOptions options)
    {
        var text = reader.GetString() ?? throw new JsonException("a duration must be a string like \"01:30:00\"");
        if (TimeSpan.TryParseExact(text, "c", System.Globalization.CultureInfo.InvariantCulture, out var value))
        {
            return value;
        }

        var parts = text.Split(':');
        if (parts.Length == 3
            && int.TryParse(parts[0], System.Globalization.NumberStyles.None, System.Globalization.CultureInfo.InvariantCulture, out var h)
            && int.TryParse(parts[1], System.Globalization.NumberStyles.None, System.Globalization.CultureInfo.InvariantCulture, out var m) && m < 60
            && double.TryParse(parts[2], System.Globalization.NumberStyles.AllowDecimalPoint, System.Globalization.CultureInfo.InvariantCulture, out var sec) && sec < 60)
        {
            return TimeSpan.FromHours(h) + TimeSpan.FromMinutes(m) + TimeSpan.FromSeconds(sec);
        }

        throw new JsonException($"'{text}' is not a duration (use hh:mm:ss, hours may exceed 23)");
    }

    public override void Write(Utf8JsonWriter writer, TimeSpan value, JsonSerializerOptions options) =>
        writer.WriteStringValue(value.ToString("c", System.Globalization.CultureInfo.InvariantCulture));
}
