using SiloWatch.Plant;

namespace SiloWatch.Mechanics;

/// <summary>Options of <see cref="SiloModel.Create(SiloOptions, Material, SiloModelOptions?)"/>.</summary>
public sealed record SiloModelOptions
{
    /// <summary>Properties for the monitoring expectation; default the material's mean values (<see cref="PropertyCase.Mean"/>). Set calibrated values here.</summary>
    public SolidProperties? Expected { get; init; }

    /// <summary>Code factors (discharge, patch, hopper). Default <see cref="LoadFactors.Default"/>.</summary>
    public LoadFactors Factors { get; init; } = LoadFactors.Default;
}

/// <summary>One wall strain gauge of the silo as the model sees it.</summary>
/// <param name="Index">Position in <see cref="SiloModel.Gauges"/> and in the span <see cref="SiloModel.ExpectedStrains"/> fills.</param>
/// <param name="SensorIndex">Index of the sensor in the silo's sensor list (= <c>SensorRef.Index</c>).</param>
/// <param name="IsModelled">False when no expected strain can be given (reason in <paramref name="NotModelledReason"/>); the expected value is then NaN.</param>
public sealed record GaugeModel(
    int Index,
    int SensorIndex,
    string SensorId,
    string Ring,
    SensorKind Kind,
    double HeightAboveTransitionM,
    double AngleDeg,
    bool IsModelled,
    string NotModelledReason);

/// <summary>
/// One silo with its stored solid, every per-silo constant precomputed once, so that the expected
/// readings of a new fill state cost a few tens of nanoseconds per gauge.
/// <para>
/// Monitoring expectation model: Janssen in the vertical section with the mean (or calibrated)
/// properties; the heap above the highest wall contact acts as a surcharge q0 = γ·h_o on the
/// contact plane (so floor + wall friction = weight exactly, and the loads run on continuously
/// from the hopper into the vertical section); Walker-type stresses in the hopper. The EN 1991-4
/// characteristic profile (<see cref="CharacteristicAt"/>) measures depth from the equivalent
/// surface instead, as the standard does. Wall loads are axisymmetric: eccentricity only moves
/// the support reactions. Strains are from the contents alone (the empty structure is in the gauge zero).
/// </para>
/// </summary>
public sealed class SiloModel
{
    private readonly double _gamma;
    private readonly double _k;
    private readonly double _mu;
    private readonly double _z0;
    private readonly double _rh;
    private readonly double _area;
    private readonly double _perimeter;
    private readonly double _surchargeKPa;
    private readonly double _bulkDensity;
    private readonly double _volumeAtTransition;
    private readonly double _structureKn;

    // Supports: unit vectors of the support angles; weighed flags.
    private readonly double[] _supportCos;
    private readonly double[] _supportSin;
    private readonly bool[] _supportWeighed;

    // Gauges: height above transition, strain per n_z (microstrain per kN/m) and per p_h (microstrain per kPa).
    private readonly double[] _gaugeHeight;
    private readonly double[] _gaugePerAxial;
    private readonly double[] _gaugePerHorizontal;
    private readonly bool[] _gaugeModelled;

    private SiloModel(SiloOptions silo, Material material, SiloModelOptions options)
    {
        Silo = silo;
        Material = material;
        Factors = options.Factors;
        Geometry = new SiloGeometry(silo.Geometry, material.AngleOfReposeDeg);
        WallCategory = silo.Geometry.WallCategory;
        HopperWallCategory = silo.Geometry.Hopper.WallCategory ?? WallCategory;
        Expected = options.Expected ?? material.Properties(PropertyCase.Mean, WallCategory);
        if (!(Expected.UnitWeightKnM3 > 0 && Expected.K > 0 && Expected.Mu > 0))
        {
            throw new ArgumentException($"expected properties must be positive (γ {Expected.UnitWeightKnM3}, K {Expected.K}, μ {Expected.Mu})", nameof(options));
        }

        _gamma = Expected.UnitWeightKnM3;
        _k = Expected.K;
        _mu = Expected.Mu;
        _area = Geometry.AreaM2;
        _perimeter = Geometry.PerimeterM;
        _rh = Geometry.HydraulicRadiusM;
        _z0 = Janssen.CharacteristicDepthM(_rh, Expected.KMu);
        _surchargeKPa = _gamma * Geometry.HeapEquivalentHeightM;
        _bulkDensity = Expected.BulkDensityKgM3;
        _volumeAtTransition = Geometry.VolumeAtLevel(Geometry.HopperHeightM);
        _structureKn = Units.MassKgToWeightKn(silo.Weighing.StructureMassKg);

        AspectRatio = Geometry.WallHeightM / Geometry.CharacteristicDimensionM;
        AspectRatioClass = En1991Part4.ClassifyAspectRatio(AspectRatio);
        OutletEccentricityM = Math.Abs(silo.Geometry.Hopper.OutletEccentricityM);
        CapacityTonnesUpper = Geometry.CapacityM3 * material.UnitWeightUpperKnM3 / Units.StandardGravity;
        ActionClass = En1991Part4.ClassifyAction(CapacityTonnesUpper, OutletEccentricityM / Geometry.CharacteristicDimensionM, Factors.LargeEccentricityRatio);

        if (Geometry.HopperShape != HopperShape.Flat)
        {
            var tanBeta = Math.Tan(Units.DegToRad(Geometry.HopperHalfAngleDeg));
            var muHopperLower = material.MuLower(HopperWallCategory);
            HopperIsSteep = HopperLoads.IsSteep(tanBeta, material.KLower, muHopperLower);
            var muHopper = material.MuMean(HopperWallCategory) * (Expected.Mu / material.MuMean(WallCategory));
            // Shallow hopper: friction only partly mobilised, μ_heff = (1 − K)/(2·tanβ) [M?].
            HopperFrictionUsed = HopperIsSteep ? muHopper : Math.Min(muHopper, HopperLoads.MobilisedFriction(_k, tanBeta));
            HopperF = HopperLoads.FillingF(tanBeta, HopperFrictionUsed, Factors.HopperFillingB);
            HopperN = HopperLoads.PowerN(HopperLoads.ShapeFactorS(Geometry.HopperShape), HopperF, HopperFrictionUsed, tanBeta, Factors.HopperExponent);
        }

        var w = silo.Weighing;
        SupportCount = w.SupportCount;
        _supportCos = new double[Math.Max(0, w.SupportCount)];
        _supportSin = new double[_supportCos.Length];
        _supportWeighed = new bool[_supportCos.Length];
        for (var i = 0; i < _supportCos.Length; i++)
        {
            var a = Units.DegToRad(w.FirstSupportAngleDeg + (360.0 * i / w.SupportCount));
            _supportCos[i] = Math.Cos(a);
            _supportSin[i] = Math.Sin(a);
        }

        foreach (var s in silo.Sensors)
        {
            if (s.Kind == SensorKind.LoadCell && s.Support >= 1 && s.Support <= _supportWeighed.Length)
            {
                _supportWeighed[s.Support - 1] = true;
            }
        }

        WeighedSupportCount = _supportWeighed.Count(x => x);

        var gauges = new List<GaugeModel>();
        var g = silo.Geometry;
        for (var i = 0; i < silo.Sensors.Count; i++)
        {
            var s = silo.Sensors[i];
            if (s.Kind is not (SensorKind.AxialStrain or SensorKind.HoopStrain))
            {
                continue;
            }

            var reason = "";
            if (Geometry.Section != SectionShape.Circular)
            {
                reason = "expected wall strain is modelled for circular shells only (a flat wall carries plate bending)";
            }
            else if (s.HeightM < 0 || s.HeightM > Geometry.WallHeightM)
            {
                reason = "gauge is not on the vertical wall (hopper wall strains are not modelled)";
            }
            else if (!(g.WallThicknessM > 0 && g.WallYoungsModulusGPa > 0))
            {
                reason = "wall thickness and Young's modulus are needed for strains";
            }

            gauges.Add(new GaugeModel(gauges.Count, i, s.Id, s.Ring, s.Kind, s.HeightM, s.AngleDeg, reason.Length == 0, reason));
        }

        Gauges = gauges;
        _gaugeHeight = new double[gauges.Count];
        _gaugePerAxial = new double[gauges.Count];
        _gaugePerHorizontal = new double[gauges.Count];
        _gaugeModelled = new bool[gauges.Count];
        var radius = 0.5 * Geometry.WidthM;
        var nu = g.WallPoissonRatio;
        var tE = g.WallThicknessM * g.WallYoungsModulusGPa;
        for (var i = 0; i < gauges.Count; i++)
        {
            var gauge = gauges[i];
            _gaugeHeight[i] = gauge.HeightAboveTransitionM;
            _gaugeModelled[i] = gauge.IsModelled;
            if (!gauge.IsModelled)
            {
                continue;
            }

            // Biaxial Hooke with σ_z = −n_z/t (compression negative), σ_θ = p_h·r/t:
            // ε_z = (σ_z − ν·σ_θ)/E, ε_θ = (σ_θ − ν·σ_z)/E [D]; kPa over GPa gives microstrain.
            if (gauge.Kind == SensorKind.AxialStrain)
            {
                _gaugePerAxial[i] = -1.0 / tE;
                _gaugePerHorizontal[i] = -nu * radius / tE;
            }
            else
            {
                _gaugePerAxial[i] = nu / tE;
                _gaugePerHorizontal[i] = radius / tE;
            }
        }
    }

    /// <summary>Builds the model of one silo; throws for geometry the model does not cover (NotSupportedException names the case).</summary>
    public static SiloModel Create(SiloOptions silo, Material material, SiloModelOptions? options = null)
    {
        ArgumentNullException.ThrowIfNull(silo);
        ArgumentNullException.ThrowIfNull(material);
        return new SiloModel(silo, material, options ?? new SiloModelOptions());
    }

    /// <summary>The same silo with other expected properties (after a calibration of γ and K·μ).</summary>
    public SiloModel WithExpected(SolidProperties expected) =>
        new(Silo, Material, new SiloModelOptions { Expected = expected, Factors = Factors });

    public SiloOptions Silo { get; }

    public Material Material { get; }

    public SiloGeometry Geometry { get; }

    public LoadFactors Factors { get; }

    public WallCategory WallCategory { get; }

    public WallCategory HopperWallCategory { get; }

    /// <summary>Properties behind every expectation (mean or calibrated).</summary>
    public SolidProperties Expected { get; }

    public double AreaM2 => Geometry.AreaM2;

    public double PerimeterM => Geometry.PerimeterM;

    public double HydraulicRadiusM => Geometry.HydraulicRadiusM;

    /// <summary>Volume to the eaves with a level top, m³.</summary>
    public double CapacityM3 => Geometry.CapacityM3;

    /// <summary>Mass at <see cref="CapacityM3"/> with the expected bulk density, kg.</summary>
    public double CapacityKg => Geometry.CapacityM3 * _bulkDensity;

    /// <summary>Capacity in tonnes with the upper unit weight, as the Action Assessment Class is judged [D: a choice].</summary>
    public double CapacityTonnesUpper { get; }

    /// <summary>Janssen's z0 = (A/U)/(K·μ) with the expected properties, m.</summary>
    public double CharacteristicDepthM => _z0;

    /// <summary>h_c/d_c with h_c the wall height (a level top at the eaves).</summary>
    public double AspectRatio { get; }

    public AspectRatioClass AspectRatioClass { get; }

    public ActionAssessmentClass ActionClass { get; }

    public double OutletEccentricityM { get; }

    /// <summary>EN 1991-4 eq. 6.1 with lower K and lower hopper μ [V]; false for a flat floor.</summary>
    public bool HopperIsSteep { get; }

    /// <summary>Hopper wall friction used: μ_h (steep) or the mobilised μ_heff (shallow) [M?].</summary>
    public double HopperFrictionUsed { get; }

    /// <summary>p_n/p_v ratio F in the hopper (filling) [M].</summary>
    public double HopperF { get; }

    /// <summary>Exponent n of the hopper stress [D].</summary>
    public double HopperN { get; }

    public int SupportCount { get; }

    public int WeighedSupportCount { get; }

    public IReadOnlyList<GaugeModel> Gauges { get; }

    public bool IsSupportWeighed(int supportIndex) => _supportWeighed[supportIndex];

    /// <summary>Volume for a level, m³ (datum: outlet or flat floor up to the highest wall contact, heaped top; see <see cref="SiloGeometry"/>).</summary>
    public double VolumeAtLevel(double levelM) => Geometry.VolumeAtLevel(levelM);

    /// <summary>Level for a volume, m, clamped to [0, max level].</summary>
    public double LevelAtVolume(double volumeM3) => Geometry.LevelAtVolume(volumeM3);

    public double MassAtLevelKg(double levelM) => Geometry.VolumeAtLevel(levelM) * _bulkDensity;

    public double LevelAtMassKg(double massKg) => Geometry.LevelAtVolume(massKg / _bulkDensity);

    /// <summary>Fill state for a level (must lie within [0, max level]).</summary>
    public FillState StateAtLevel(double levelM, FlowMode flow = FlowMode.Filling, double eccentricityM = 0, double eccentricityAzimuthDeg = 0)
    {
        var volume = Geometry.VolumeAtLevel(levelM);
        return new FillState(levelM, volume, volume * _bulkDensity, levelM - Geometry.HopperHeightM, flow, eccentricityM, eccentricityAzimuthDeg);
    }

    /// <summary>Fill state for a mass; above capacity the contact rises past the eaves (an overfill), never clamped silently.</summary>
    public FillState StateAtMass(double massKg, FlowMode flow = FlowMode.Filling, double eccentricityM = 0, double eccentricityAzimuthDeg = 0)
    {
        var volume = Math.Max(0, massKg) / _bulkDensity;
        double level;
        if (volume >= _volumeAtTransition)
        {
            level = Geometry.HopperHeightM + ((volume - _volumeAtTransition) / _area);
        }
        else
        {
            Geometry.TryLevelAtVolume(volume, out level);
        }

        return new FillState(level, volume, volume * _bulkDensity, level - Geometry.HopperHeightM, flow, eccentricityM, eccentricityAzimuthDeg);
    }

    /// <summary>Wall loads at a height above the transition for a fill state (expected properties; discharge raised by C_h, C_w).</summary>
    public WallPoint WallAt(in FillState state, double heightAboveTransitionM)
    {
        var z = state.ContactAboveTransitionM - heightAboveTransitionM;
        if (z < 0 || state.ContactAboveTransitionM < 0)
        {
            return new WallPoint(heightAboveTransitionM, 0, 0, 0, 0, 0, 0);
        }

        var pv = Janssen.VerticalStressKPa(_gamma, _z0, z, _surchargeKPa);
        var nz = Janssen.WallFrictionForceKnPerM(_gamma, _z0, _rh, z, _surchargeKPa);
        var ph = _k * pv;
        var pw = _mu * ph;
        if (state.Flow == FlowMode.Discharging)
        {
            ph *= Factors.DischargeHorizontalCh;
            pw *= Factors.DischargeFrictionCw;
            nz *= Factors.DischargeFrictionCw;
        }

        var hoop = Geometry.Section == SectionShape.Circular ? ph * 0.5 * Geometry.WidthM : double.NaN;
        return new WallPoint(heightAboveTransitionM, z, pv, ph, pw, nz, hoop);
    }

    /// <summary>Vertical stress p_v, normal p_n = F·p_v and friction μ_h·p_n on the hopper wall at a height above the outlet (filling), kPa.</summary>
    public (double VerticalKPa, double NormalKPa, double FrictionKPa) HopperAt(in FillState state, double heightAboveOutletM)
    {
        if (Geometry.HopperShape == HopperShape.Flat)
        {
            throw new NotSupportedException("a flat-bottomed silo has no hopper loads");
        }

        var xOutlet = Geometry.HopperApexHeightM - Geometry.HopperHeightM;
        var x = xOutlet + heightAboveOutletM;
        double pv;
        if (state.ContactAboveTransitionM >= 0)
        {
            var pvft = Janssen.VerticalStressKPa(_gamma, _z0, state.ContactAboveTransitionM, _surchargeKPa);
            pv = heightAboveOutletM > Geometry.HopperHeightM ? 0 : HopperLoads.VerticalStressKPa(_gamma, Geometry.HopperApexHeightM, x, HopperN, pvft);
        }
        else
        {
            // Surface within the hopper: same law from the contact, with the heap there as surcharge.
            var xc = xOutlet + state.LevelM;
            var heapKPa = _gamma * Geometry.HeapEquivalentHeightAt(state.LevelM);
            pv = heightAboveOutletM > state.LevelM ? 0 : HopperLoads.VerticalStressKPa(_gamma, xc, x, HopperN, heapKPa);
        }

        var pn = HopperF * pv;
        return (pv, pn, HopperFrictionUsed * pn);
    }

    /// <summary>
    /// Expected loads for a fill state (contents only, but <see cref="ExpectedLoads.WeighedLoadKn"/> adds the structure).
    /// The flow does not change them: discharge factors raise wall pressures, not the weight or its floor share.
    /// </summary>
    public ExpectedLoads Expect(in FillState state)
    {
        var contents = _gamma * state.VolumeM3;
        double floor;
        double friction;
        double pvTransition;
        if (state.ContactAboveTransitionM <= 0)
        {
            // All in the hopper (or a heap on a flat floor not yet at the wall): everything on the floor/hopper.
            floor = contents;
            friction = 0;
            pvTransition = Geometry.HopperShape == HopperShape.Flat ? contents / _area : 0;
        }
        else
        {
            pvTransition = Janssen.VerticalStressKPa(_gamma, _z0, state.ContactAboveTransitionM, _surchargeKPa);
            friction = _perimeter * Janssen.WallFrictionForceKnPerM(_gamma, _z0, _rh, state.ContactAboveTransitionM, _surchargeKPa);
            floor = (_area * pvTransition) + (_gamma * Geometry.HopperVolumeM3);
        }

        var weighed = Silo.Weighing.Arrangement switch
        {
            WeighingArrangement.AllSupports => contents + _structureKn,
            WeighingArrangement.SomeSupports => WeighedContentsShare(state, contents) + _structureKn,
            WeighingArrangement.FloorOnly => floor + _structureKn,
            _ => double.NaN,
        };
        return new ExpectedLoads(contents, floor, friction, weighed, pvTransition);
    }

    /// <summary>
    /// Contents' reaction at each support (index 0 = support 1), rigid base, n ≥ 3 supports on a circle:
    /// R_i = W/n·[1 + 2(e/R)·cos(θ_i − θ_e)] [D]. A negative value means uplift of that support.
    /// For <see cref="WeighingArrangement.FloorOnly"/> the supports are the floor's cells and share the
    /// floor load equally: where the floor pressure's centre lies under an eccentric fill is not modelled.
    /// </summary>
    public void SupportReactionsKn(in FillState state, Span<double> reactionsKn)
    {
        RequireSupports();
        if (reactionsKn.Length < SupportCount)
        {
            throw new ArgumentException($"need room for {SupportCount} reactions", nameof(reactionsKn));
        }

        var n = SupportCount;
        if (Silo.Weighing.Arrangement == WeighingArrangement.FloorOnly)
        {
            reactionsKn[..n].Fill(Expect(state).FloorLoadKn / n);
            return;
        }

        var w = _gamma * state.VolumeM3;
        var (c, s) = EccentricityVector(state);
        for (var i = 0; i < n; i++)
        {
            reactionsKn[i] = w / n * (1 + (2 * ((c * _supportCos[i]) + (s * _supportSin[i]))));
        }
    }

    /// <summary>Expected microstrain at every gauge of <see cref="Gauges"/> (tension positive; NaN where the gauge is not modelled).</summary>
    public void ExpectedStrains(in FillState state, Span<double> strainMicro)
    {
        var count = _gaugeHeight.Length;
        if (strainMicro.Length < count)
        {
            throw new ArgumentException($"need room for {count} gauges", nameof(strainMicro));
        }

        var contact = state.ContactAboveTransitionM;
        var ch = state.Flow == FlowMode.Discharging ? Factors.DischargeHorizontalCh : 1.0;
        var cw = state.Flow == FlowMode.Discharging ? Factors.DischargeFrictionCw : 1.0;
        var gz0 = _gamma * _z0;
        var excess = gz0 - _surchargeKPa;
        var inv = 1.0 / _z0;
        for (var i = 0; i < count; i++)
        {
            if (!_gaugeModelled[i])
            {
                strainMicro[i] = double.NaN;
                continue;
            }

            var z = contact - _gaugeHeight[i];
            if (z <= 0)
            {
                strainMicro[i] = 0;
                continue;
            }

            var x = z * inv;
            var e = Math.Exp(-x);
            var oneMinus = x < 1e-4 ? Janssen.OneMinusExpNeg(x) : 1 - e;
            // p_h = K·(γ·z0 − (γ·z0 − q0)·e^(−x)); n_z = (A/U)·(γ·z − (γ·z0 − q0)·(1 − e^(−x))) [D].
            var ph = _k * (gz0 - (excess * e)) * ch;
            var nz = _rh * ((_gamma * z) - (excess * oneMinus)) * cw;
            strainMicro[i] = (_gaugePerAxial[i] * nz) + (_gaugePerHorizontal[i] * ph);
        }
    }

    /// <summary>Floor (or hopper) load of the contents for a level with given properties, kN (the function <see cref="InvertFloorLoad"/> inverts).</summary>
    public double FloorLoadAtLevelKn(double levelM, SolidProperties? properties = null)
    {
        var p = properties ?? Expected;
        var volume = Geometry.VolumeAtLevel(levelM);
        var contact = levelM - Geometry.HopperHeightM;
        if (contact <= 0)
        {
            return p.UnitWeightKnM3 * volume;
        }

        var z0 = Janssen.CharacteristicDepthM(_rh, p.KMu);
        var q0 = p.UnitWeightKnM3 * Geometry.HeapEquivalentHeightM;
        return (_area * Janssen.VerticalStressKPa(p.UnitWeightKnM3, z0, contact, q0)) + (p.UnitWeightKnM3 * Geometry.HopperVolumeM3);
    }

    /// <summary>
    /// Floor (or hopper) load of a mass of contents with given properties, kN: the level follows from
    /// the mass and the bulk density of <paramref name="properties"/> (so a lighter solid stands higher).
    /// The same load as <see cref="Expect"/> and <see cref="FloorLoadAtLevelKn"/>, for any properties; no allocation.
    /// </summary>
    public double FloorLoadAtMassKn(double massKg, in SolidProperties properties)
    {
        var gamma = properties.UnitWeightKnM3;
        var volume = Math.Max(0, massKg) / properties.BulkDensityKgM3;
        if (volume <= _volumeAtTransition)
        {
            // All in the hopper (or a heap not yet at the wall): the floor carries the weight.
            return gamma * volume;
        }

        var contact = (volume - _volumeAtTransition) / _area;
        var z0 = Janssen.CharacteristicDepthM(_rh, properties.KMu);
        var q0 = gamma * Geometry.HeapEquivalentHeightM;
        return (_area * Janssen.VerticalStressKPa(gamma, z0, contact, q0)) + (gamma * Geometry.HopperVolumeM3);
    }

    /// <summary>
    /// Level and mass from the contents' floor (or hopper) load, kN, by inverting Janssen with the
    /// expected (or given) properties. Closed form in the vertical section; bracketed Brent in the hopper.
    /// </summary>
    public InversionResult InvertFloorLoad(double floorLoadKn, SolidProperties? properties = null)
    {
        var p = properties ?? Expected;
        var gamma = p.UnitWeightKnM3;
        var rho = p.BulkDensityKgM3;
        var z0 = Janssen.CharacteristicDepthM(_rh, p.KMu);
        var q0 = gamma * Geometry.HeapEquivalentHeightM;
        var hopperKn = gamma * Geometry.HopperVolumeM3;
        var saturation = (_area * gamma * z0) + hopperKn;
        if (double.IsNaN(floorLoadKn))
        {
            throw new ArgumentOutOfRangeException(nameof(floorLoadKn), floorLoadKn, "floor load is not a number");
        }

        if (floorLoadKn <= 0)
        {
            return new InversionResult(InversionStatus.Empty, 0, 0, 0, 0, 0, saturation) with { FloorLoadKn = floorLoadKn, Properties = p, MaxLevelM = Geometry.MaxLevelM };
        }

        if (floorLoadKn >= saturation)
        {
            return new InversionResult(InversionStatus.AboveSaturation, double.NaN, double.NaN, double.NaN, double.PositiveInfinity, double.NaN, saturation)
                with { FloorLoadKn = floorLoadKn, Properties = p, MaxLevelM = Geometry.MaxLevelM };
        }

        var atTransition = gamma * _volumeAtTransition;
        if (floorLoadKn <= atTransition)
        {
            // Everything rests on the floor or in the hopper: the load is the weight.
            var volume = floorLoadKn / gamma;
            Geometry.TryLevelAtVolume(volume, out var level);
            var slope = gamma * Geometry.VolumeSlopeM2(level);
            return new InversionResult(InversionStatus.Solved, level, volume, volume * rho, slope > 0 ? 1.0 / slope : 0, 0, saturation)
                with { FloorLoadKn = floorLoadKn, Properties = p, MaxLevelM = Geometry.MaxLevelM };
        }

        // Vertical section: F = A·[γz0 − (γz0 − q0)·e^(−z/z0)] + W_hopper, solved for z in closed form [D].
        var excess = (gamma * z0) - q0;
        var ratio = ((gamma * z0) - ((floorLoadKn - hopperKn) / _area)) / excess;
        var x = -Math.Log(ratio);
        var z = x * z0;
        var levelM = Geometry.HopperHeightM + z;
        var volumeM3 = _volumeAtTransition + (_area * z);
        var ex = Math.Exp(-x);
        var dPdz = excess * ex / z0;
        var dPdz0 = (gamma * Janssen.OneMinusExpNeg(x)) - (excess * x / z0 * ex);
        var dLevelDLoad = 1.0 / (_area * dPdz);
        var dLevelDKMu = dPdz0 / dPdz * z0 / p.KMu;
        var status = levelM > Geometry.MaxLevelM + 1e-9 ? InversionStatus.AboveFullLevel : InversionStatus.Solved;
        return new InversionResult(status, levelM, volumeM3, volumeM3 * rho, dLevelDLoad, dLevelDKMu, saturation)
            with { FloorLoadKn = floorLoadKn, Properties = p, MaxLevelM = Geometry.MaxLevelM };
    }

    /// <summary>EN 1991-4 characteristic loads on the vertical wall at a depth below the equivalent surface (see <see cref="CharacteristicProfile"/>).</summary>
    public CharacteristicPoint CharacteristicAt(double depthM)
    {
        RequireSlender();
        var wall = WallCategory;
        var pressure = En1991Part4.SlenderFilling(Material.Properties(PropertyCase.MaxNormalWallPressure, wall), _rh, depthM);
        var friction = En1991Part4.SlenderFilling(Material.Properties(PropertyCase.MaxWallFriction, wall), _rh, depthM);
        var floor = En1991Part4.SlenderFilling(Material.Properties(PropertyCase.MaxFloorLoad, wall), _rh, depthM);
        var filling = new WallLoads(pressure.HorizontalKPa, friction.WallFrictionKPa, floor.VerticalKPa, friction.AxialForceKnPerM);
        var discharge = En1991Part4.SlenderDischarge(filling, Factors);
        return new CharacteristicPoint(depthM, filling, discharge);
    }

    /// <summary>Discharge patch for the silo full to the eaves (thin circular wall only), EN 1991-4 §5.2.2.2 [M?].</summary>
    public PatchLoad DischargePatchAt(double depthM, double fillingEccentricityM = 0)
    {
        RequireSlender();
        if (Geometry.Section != SectionShape.Circular)
        {
            throw new NotSupportedException($"discharge patch loads on a {Geometry.Section} section (EN 1991-4 §5.2.2.3) are not modelled");
        }

        var dc = Geometry.CharacteristicDimensionM;
        if (OutletEccentricityM > Factors.LargeEccentricityRatio * dc)
        {
            throw new NotSupportedException($"large eccentric discharge (e_o {OutletEccentricityM:0.##} m > {Factors.LargeEccentricityRatio} d_c): the flow-channel procedure of EN 1991-4 §5.2.4.3 is not modelled");
        }

        var e = Math.Max(fillingEccentricityM, OutletEccentricityM);
        var cpe = En1991Part4.PatchFactor(Factors.DischargePatchBase, Material.PatchFactorCop, e, dc, AspectRatio, Factors.PatchSlendernessCoefficient);
        var phe = CharacteristicAt(depthM).Discharge.HorizontalKPa;
        return new PatchLoad(cpe, cpe * phe, Factors.PatchHeightOverDc * dc, 2 * e / dc);
    }

    /// <summary>Filling patch for a slender circular silo with filling eccentricity e_f: C_pf (same form as C_pe, base 0.21) times p_hf [M?].</summary>
    public PatchLoad FillingPatchAt(double depthM, double fillingEccentricityM)
    {
        RequireSlender();
        if (Geometry.Section != SectionShape.Circular)
        {
            throw new NotSupportedException($"filling patch loads on a {Geometry.Section} section (EN 1991-4 §5.2.1.2) are not modelled");
        }

        var dc = Geometry.CharacteristicDimensionM;
        var cpf = En1991Part4.PatchFactor(Factors.FillingPatchBase, Material.PatchFactorCop, fillingEccentricityM, dc, AspectRatio, Factors.PatchSlendernessCoefficient);
        var phf = CharacteristicAt(depthM).Filling.HorizontalKPa;
        return new PatchLoad(cpf, cpf * phf, Factors.PatchHeightOverDc * dc, 2 * fillingEccentricityM / dc);
    }

    private void RequireSlender()
    {
        if (AspectRatioClass != AspectRatioClass.Slender)
        {
            throw new NotSupportedException($"EN 1991-4 characteristic loads for {AspectRatioClass.ToString().ToLowerInvariant()} silos (h_c/d_c = {AspectRatio:0.##}, §5.3/§5.4) are not implemented; only slender silos (§5.2) are");
        }
    }

    private void RequireSupports()
    {
        if (SupportCount < 3)
        {
            throw new NotSupportedException($"support reactions need at least 3 supports on a circle; the silo has {SupportCount}");
        }
    }

    private double WeighedContentsShare(in FillState state, double contentsKn)
    {
        if (SupportCount < 3)
        {
            return double.NaN;
        }

        var (c, s) = EccentricityVector(state);
        var sum = 0.0;
        var n = SupportCount;
        for (var i = 0; i < n; i++)
        {
            if (_supportWeighed[i])
            {
                sum += contentsKn / n * (1 + (2 * ((c * _supportCos[i]) + (s * _supportSin[i]))));
            }
        }

        return sum;
    }

    private (double Cos, double Sin) EccentricityVector(in FillState state)
    {
        if (state.EccentricityM == 0)
        {
            return (0, 0);
        }

        var r = Silo.Weighing.SupportRadiusM;
        if (!(r > 0))
        {
            throw new NotSupportedException("eccentric support reactions need Weighing:SupportRadiusM > 0");
        }

        var a = Units.DegToRad(state.EccentricityAzimuthDeg);
        var ratio = state.EccentricityM / r;
        return (ratio * Math.Cos(a), ratio * Math.Sin(a));
    }
}

/// <summary>EN 1991-4 characteristic wall loads at one depth below the equivalent surface: each quantity from its governing property case (Table 3.1 [M]).</summary>
public readonly record struct CharacteristicPoint(double DepthM, WallLoads Filling, WallLoads Discharge);
