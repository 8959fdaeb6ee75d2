namespace SiloWatch.Plant;

/// <summary>
/// One accepted telemetry value, as it leaves the decoder: which silo (index in the
/// <see cref="PlantRegistry"/>), which sensor (index in the silo), when (UTC, Unix milliseconds)
/// and the value in the sensor's declared unit (mV/V for bridges, degC for temperatures).
/// </summary>
public readonly record struct TelemetrySample(int SiloIndex, int SensorIndex, long TimestampMs, double Value);
