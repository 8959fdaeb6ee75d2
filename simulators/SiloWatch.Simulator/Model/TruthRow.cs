namespace SiloWatch.Simulator.Model;

public enum FlowState
{
    Idle,
    Filling,
    Discharging,
}

/// <summary>
/// The simulator's ground truth for one silo at one instant. Eccentricity is the offset of the
/// contents' centre of mass from the axis (what the supports see); the flow channel's azimuth is
/// given while an eccentric discharge runs. <see cref="WallA1Ratio"/> is the strength of the wall-load
/// asymmetry the simulator's own physics produces (no noise, wind or heat), for alarm benchmarks.
/// </summary>
public sealed record TruthRow(
    DateTimeOffset Time,
    string Site,
    string Silo,
    double MassKg,
    double LevelM,
    double EccentricityM,
    double EccentricityAzimuthDeg,
    FlowState Flow,
    double FlowRateKgPerS,
    double? ChannelAzimuthDeg,
    double FloorLoadKn,
    double WallFrictionKn,
    string Faults,
    string Network)
{
    /// <summary>
    /// Largest first-harmonic ratio A1/A0 over the silo's gauge rings that the contents cover: the first harmonic
    /// of the mechanical wall load (load sense: axial compression, hoop tension) over its mean, from the
    /// simulator's physics alone. 0 when there is no ring, nothing covers one, or no flow channel acts.
    /// </summary>
    public double WallA1Ratio { get; init; }
}
