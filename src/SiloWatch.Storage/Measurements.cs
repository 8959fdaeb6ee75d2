namespace SiloWatch.Storage;

/// <summary>Measurement names SiloWatch writes (see README.md in this project for fields, tags and units).</summary>
public static class Measurements
{
    /// <summary>One sensor channel; tags site, silo, sensor, kind.</summary>
    public const string Sensor = "sensor";

    /// <summary>The inventory estimate of one silo; tags site, silo.</summary>
    public const string SiloEstimate = "silo_estimate";

    /// <summary>Circumferential harmonics of one gauge ring; tags site, silo, ring.</summary>
    public const string Ring = "ring";

    /// <summary>Alarm counts of one site; tag site.</summary>
    public const string Alarms = "alarms";
}

public static class Tags
{
    public const string Site = "site";
    public const string Silo = "silo";
    public const string Sensor = "sensor";
    public const string Kind = "kind";
    public const string Ring = "ring";
}

public static class SensorFields
{
    /// <summary>The value as transmitted, in the sensor's declared unit (mV/V, degC).</summary>
    public const string Raw = "raw";

    /// <summary>The calibrated value: kN for load cells, microstrain for gauges, degC for temperatures.</summary>
    public const string Value = "value";

    /// <summary>Numeric quality code (0 good; higher is worse).</summary>
    public const string Quality = "quality";

    public static readonly string[] All = [Raw, Value, Quality];
}

public static class SiloEstimateFields
{
    public const string MassKg = "mass_kg";
    public const string LevelM = "level_m";
    public const string FillPct = "fill_pct";
    public const string RateKgPerS = "rate_kg_s";
    public const string MassSigmaKg = "mass_sigma_kg";
    public const string Quality = "quality";

    public static readonly string[] All = [MassKg, LevelM, FillPct, RateKgPerS, MassSigmaKg, Quality];
}

public static class RingFields
{
    /// <summary>Mean strain of the ring (n = 0), microstrain.</summary>
    public const string A0Microstrain = "a0_ue";

    /// <summary>Amplitude of the first harmonic (n = 1), microstrain.</summary>
    public const string A1Microstrain = "a1_ue";

    /// <summary>Direction of the first harmonic, degrees from the silo's reference mark.</summary>
    public const string Phi1Deg = "phi1_deg";

    /// <summary>Amplitude of the second harmonic (n = 2, ovalisation), microstrain.</summary>
    public const string A2Microstrain = "a2_ue";

    public const string Phi2Deg = "phi2_deg";

    public static readonly string[] All = [A0Microstrain, A1Microstrain, Phi1Deg, A2Microstrain, Phi2Deg];
}

public static class AlarmFields
{
    public const string ActiveCount = "active_count";
    public const string UnacknowledgedCount = "unacked_count";
    public const string ShelvedCount = "shelved_count";

    public static readonly string[] All = [ActiveCount, UnacknowledgedCount, ShelvedCount];
}
