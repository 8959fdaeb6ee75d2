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
/// given while an eccentric discharge runs.
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
    string Network);
