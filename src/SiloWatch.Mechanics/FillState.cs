namespace SiloWatch.Mechanics;

public enum FlowMode
{
    /// <summary>Filling or at rest: Janssen / EN 1991-4 filling loads.</summary>
    Filling,

    /// <summary>Discharging: wall loads raised by C_h and C_w (configurable, EN 1991-4 §5.2.2 [M?]).</summary>
    Discharging,
}

/// <summary>
/// One fill state of a silo, built by <see cref="SiloModel.StateAtLevel"/> or <see cref="SiloModel.StateAtMass"/>:
/// the level (datum: see <see cref="SiloGeometry"/>), the volume, the mass,
/// the height of the highest wall contact above the transition (negative while the solid is all in the
/// hopper), the flow, and the eccentricity of the contents' centre of gravity (for the support reactions).
/// </summary>
public readonly record struct FillState(
    double LevelM,
    double VolumeM3,
    double MassKg,
    double ContactAboveTransitionM,
    FlowMode Flow,
    double EccentricityM,
    double EccentricityAzimuthDeg);

/// <summary>What the sensors of a silo should see for one fill state (contents only; the empty structure is in <see cref="WeighedLoadKn"/> only).</summary>
/// <param name="ContentsWeightKn">γ·V: the whole weight of the contents.</param>
/// <param name="FloorLoadKn">What the floor or hopper carries: A·p_v at the transition plus the hopper contents (hopper), or A·p_v(H) (flat floor).</param>
/// <param name="WallFrictionKn">What the vertical walls carry by friction: U·n_z at the transition.</param>
/// <param name="WeighedLoadKn">What the load cells should sum to, per the weighing arrangement, including the structure mass on them; NaN for arrangement None.</param>
/// <param name="TransitionVerticalKPa">p_v at the transition (or flat floor).</param>
public readonly record struct ExpectedLoads(
    double ContentsWeightKn,
    double FloorLoadKn,
    double WallFrictionKn,
    double WeighedLoadKn,
    double TransitionVerticalKPa);

/// <summary>Loads on the vertical wall at one height for one fill state.</summary>
/// <param name="DepthM">Depth below the equivalent surface (0 above it).</param>
/// <param name="HoopForceKnPerM">n_θ = p_h·r (circular sections; NaN otherwise: plate bending is not modelled).</param>
public readonly record struct WallPoint(
    double HeightAboveTransitionM,
    double DepthM,
    double VerticalKPa,
    double HorizontalKPa,
    double WallFrictionKPa,
    double AxialForceKnPerM,
    double HoopForceKnPerM);
