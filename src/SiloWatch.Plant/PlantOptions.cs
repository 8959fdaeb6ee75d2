namespace SiloWatch.Plant;

/// <summary>
/// The plant definition: sites, their silos and every sensor on them. Bound from the
/// <see cref="SectionName"/> section of configuration (config/plant.demo.json by default).
/// </summary>
public sealed class PlantOptions
{
    public const string SectionName = "Plant";

    /// <summary>Sites of this plant. At least one is required.</summary>
    public List<SiteOptions> Sites { get; set; } = [];
}

public sealed class SiteOptions
{
    /// <summary>Site id: lower-case letters, digits and '-', used in MQTT topics and series tags.</summary>
    public string Id { get; set; } = "";

    public string Name { get; set; } = "";

    /// <summary>Time zone of the site (IANA id) for reports; defaults to UTC.</summary>
    public string TimeZone { get; set; } = "UTC";

    public List<SiloOptions> Silos { get; set; } = [];
}

public enum SectionShape
{
    Circular,
    Square,
    Rectangular,
}

public enum HopperShape
{
    /// <summary>Flat floor, no hopper.</summary>
    Flat,
    Conical,
    Pyramidal,
    Wedge,
}

/// <summary>Wall surface category after EN 1991-4 Table 4.1: D1 slippery, D2 smooth, D3 rough, D4 irregular.</summary>
public enum WallCategory
{
    D1,
    D2,
    D3,
    D4,
}

public enum WeighingArrangement
{
    /// <summary>Every support (legs, skirt, ring beam) stands on a load cell: the sum is the whole weight.</summary>
    AllSupports,

    /// <summary>Some supports on load cells, the rest on dummies: the sum is scaled by n / weighed.</summary>
    SomeSupports,

    /// <summary>Only the floor or hopper stands on load cells; the walls are founded separately.</summary>
    FloorOnly,

    /// <summary>No load cells: inventory comes from wall gauges or not at all.</summary>
    None,
}

public sealed class SiloOptions
{
    /// <summary>Silo id, unique within its site: letters, digits and '-'.</summary>
    public string Id { get; set; } = "";

    public string Name { get; set; } = "";

    public GeometryOptions Geometry { get; set; } = new();

    /// <summary>Name of a material in the material library (config/materials.json).</summary>
    public string Material { get; set; } = "";

    public WeighingOptions Weighing { get; set; } = new();

    public List<SensorOptions> Sensors { get; set; } = [];

    public AlarmLimitOptions AlarmLimits { get; set; } = new();
}

public sealed class GeometryOptions
{
    public SectionShape Section { get; set; } = SectionShape.Circular;

    /// <summary>Inside diameter of a circular section, m.</summary>
    public double DiameterM { get; set; }

    /// <summary>Side of a square section, or the shorter side of a rectangle, m.</summary>
    public double WidthM { get; set; }

    /// <summary>Longer side of a rectangular section, m.</summary>
    public double LengthM { get; set; }

    /// <summary>Height of the vertical wall from the transition (or flat floor) to the eaves, m.</summary>
    public double WallHeightM { get; set; }

    /// <summary>Wall thickness, m (for strains from membrane forces).</summary>
    public double WallThicknessM { get; set; }

    /// <summary>Young's modulus of the wall, GPa. Default 200 (steel).</summary>
    public double WallYoungsModulusGPa { get; set; } = 200;

    /// <summary>Poisson's ratio of the wall. Default 0.3 (steel).</summary>
    public double WallPoissonRatio { get; set; } = 0.3;

    public WallCategory WallCategory { get; set; } = WallCategory.D2;

    public HopperOptions Hopper { get; set; } = new();
}

public sealed class HopperOptions
{
    public HopperShape Shape { get; set; } = HopperShape.Flat;

    /// <summary>Half-angle of the hopper from the vertical, degrees.</summary>
    public double HalfAngleDeg { get; set; }

    /// <summary>Outlet diameter (cone) or side (pyramid, wedge slot width), m.</summary>
    public double OutletM { get; set; }

    /// <summary>Hopper wall category; defaults to the silo wall's.</summary>
    public WallCategory? WallCategory { get; set; }

    /// <summary>Horizontal offset of the outlet centre from the silo axis, m (e_o of EN 1991-4). Default 0 (central outlet).</summary>
    public double OutletEccentricityM { get; set; }
}

public sealed class WeighingOptions
{
    public WeighingArrangement Arrangement { get; set; } = WeighingArrangement.AllSupports;

    /// <summary>Number of supports (legs or bearing points) under the silo.</summary>
    public int SupportCount { get; set; }

    /// <summary>Radius of the support circle from the silo axis, m.</summary>
    public double SupportRadiusM { get; set; }

    /// <summary>Angle of the first support from the silo's reference mark, degrees; the rest are evenly spaced.</summary>
    public double FirstSupportAngleDeg { get; set; }

    /// <summary>Rated capacity of one support (leg, bearing), kN: the support-overload alarm compares with it.</summary>
    public double SupportCapacityKn { get; set; }

    /// <summary>
    /// Mass of the empty structure, kg: for AllSupports and SomeSupports the whole silo, shared
    /// equally by all its supports (so m weighed of n carry m/n of it); for FloorOnly the floor or
    /// hopper that stands on the cells. The tare estimate until a commanded tare.
    /// </summary>
    public double StructureMassKg { get; set; }
}

public enum SensorKind
{
    LoadCell,
    AxialStrain,
    HoopStrain,
    Temperature,

    /// <summary>
    /// An outlet signal from the plant's control system: 1 while the outlet gate is open or the discharge feeder runs,
    /// 0 while it is closed or stopped (unit "state", range 0..1). The discharge state follows it while it is fresh.
    /// </summary>
    Outlet,
}

public enum BridgeType
{
    Quarter,
    Half,
    Full,
    Poisson,
}

public sealed class SensorOptions
{
    /// <summary>Sensor id, unique within its silo: letters, digits, '-' and '_'.</summary>
    public string Id { get; set; } = "";

    public SensorKind Kind { get; set; }

    /// <summary>The unit the gateway sends: "mV/V" for bridges, "degC" for temperatures, "state" (0 or 1) for an outlet signal.</summary>
    public string Unit { get; set; } = "";

    /// <summary>Expected interval between samples. Default 1 s.</summary>
    public TimeSpan ExpectedPeriod { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>Physical range of the transmitted value (in <see cref="Unit"/>); outside it a sample is rejected.</summary>
    public double RangeMin { get; set; } = double.NaN;

    public double RangeMax { get; set; } = double.NaN;

    // Load cells
    /// <summary>1-based support number the load cell stands under.</summary>
    public int Support { get; set; }

    /// <summary>Rated output at capacity, mV/V (typically 2).</summary>
    public double RatedOutputMvPerV { get; set; }

    /// <summary>Rated capacity, kN.</summary>
    public double CapacityKn { get; set; }

    /// <summary>Bridge excitation, V.</summary>
    public double ExcitationV { get; set; }

    /// <summary>Output with no load, mV/V.</summary>
    public double ZeroOffsetMvPerV { get; set; }

    /// <summary>Span correction factor from a calibration, dimensionless. Default 1.</summary>
    public double SpanFactor { get; set; } = 1.0;

    /// <summary>Temperature coefficient of zero, % of rated output per K.</summary>
    public double ZeroTempCoeffPctRoPerK { get; set; }

    /// <summary>Temperature coefficient of span, % of reading per K.</summary>
    public double SpanTempCoeffPctPerK { get; set; }

    /// <summary>Reference temperature of the calibration, degC. Default 20.</summary>
    public double ReferenceTemperatureC { get; set; } = 20;

    // Strain gauges
    /// <summary>Ring id the gauge belongs to (all gauges of a ring share height and kind).</summary>
    public string Ring { get; set; } = "";

    /// <summary>Height of the gauge above the transition (or flat floor), m.</summary>
    public double HeightM { get; set; }

    /// <summary>Angle around the silo from the reference mark, degrees, clockwise seen from above.</summary>
    public double AngleDeg { get; set; }

    public double GaugeFactor { get; set; }

    public BridgeType Bridge { get; set; } = BridgeType.Quarter;

    /// <summary>Id of the temperature sensor beside this gauge or cell (same silo), for compensation.</summary>
    public string TemperatureSensor { get; set; } = "";

    /// <summary>Apparent strain per K of the installed gauge, microstrain/K (thermal output), for compensation.</summary>
    public double ThermalOutputMicroPerK { get; set; }
}

/// <summary>
/// Alarm limits of one silo. PLACEHOLDERS until a licensed structural engineer sets them under
/// local code: <see cref="EngineerApproved"/> stays false until then, and the service says so.
/// </summary>
public sealed class AlarmLimitOptions
{
    /// <summary>True only when a licensed structural engineer has set these limits for this silo.</summary>
    public bool EngineerApproved { get; set; }

    /// <summary>Who set the limits and under which code (free text, for the record).</summary>
    public string ApprovedBy { get; set; } = "";

    /// <summary>Overfill limit, percent of capacity.</summary>
    public double OverfillPercent { get; set; } = 95;

    /// <summary>Support overload limit, percent of a support's rated capacity.</summary>
    public double SupportOverloadPercent { get; set; } = 90;

    /// <summary>
    /// First-harmonic ratio A1/A0 of a wall ring during discharge above which asymmetry is flagged. Default 0.10, a
    /// placeholder: a flow channel against the wall is a local pattern whose first harmonic is small (about 0.1-0.2 of
    /// the mean load), so a limit much higher would never see one (see simulators/README.md, eccentric discharge).
    /// </summary>
    public double AsymmetryRatioA1 { get; set; } = 0.10;

    /// <summary>Measured over expected wall load above which excess is flagged.</summary>
    public double ExcessLoadRatio { get; set; } = 1.25;

    /// <summary>Mass change while idle above which a rapid change is flagged, kg per minute.</summary>
    public double IdleMassChangeKgPerMin { get; set; } = 500;
}
