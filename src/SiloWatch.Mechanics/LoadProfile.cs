using SiloWatch.Plant;

namespace SiloWatch.Mechanics;

/// <summary>One height of the vertical wall in a load profile.</summary>
/// <param name="Characteristic">EN 1991-4 characteristic loads (null where the standard's method is not implemented; see the profile notes).</param>
/// <param name="DischargePatchKPa">Peak of the discharge patch p_pe if it were centred here (circular slender silos only).</param>
/// <param name="ExpectedFilling">Monitoring expectation with the mean (or calibrated) properties, filling.</param>
public sealed record ProfileRow(
    double HeightAboveTransitionM,
    double DepthBelowEquivalentSurfaceM,
    CharacteristicPoint? Characteristic,
    double? DischargePatchKPa,
    WallPoint ExpectedFilling,
    WallPoint ExpectedDischarge);

/// <summary>Expected stresses on the hopper wall at one height above the outlet (filling, mean properties), kPa.</summary>
public sealed record HopperRow(double HeightAboveOutletM, double VerticalKPa, double NormalKPa, double FrictionKPa);

/// <summary>Expected strain of one gauge ring (axisymmetric: every gauge of the ring alike).</summary>
public sealed record RingExpectation(
    string Ring,
    SensorKind Kind,
    double HeightAboveTransitionM,
    int GaugeCount,
    double FillingStrainMicro,
    double DischargeStrainMicro,
    bool IsModelled,
    string NotModelledReason);

/// <summary>The expected load profile of one silo at one fill state: what <c>silowatch profile</c> prints.</summary>
public sealed record LoadProfile(
    double LevelM,
    double MassKg,
    double VolumeM3,
    double EquivalentSurfaceAboveTransitionM,
    double AspectRatio,
    AspectRatioClass AspectRatioClass,
    ActionAssessmentClass ActionClass,
    SolidProperties Expected,
    ExpectedLoads Loads,
    IReadOnlyList<ProfileRow> Rows,
    IReadOnlyList<HopperRow> HopperRows,
    IReadOnlyList<RingExpectation> Rings,
    IReadOnlyList<string> Notes)
{
    /// <summary>The caution every load output carries (DOMAIN.md §6).</summary>
    public const string Caution =
        "These are characteristic values for monitoring, not a design check. Limits and load cases are set by a licensed structural engineer under local code; the engineer of record decides. Monitoring supplements inspection.";

    /// <summary>Builds the profile from the top of the wall down to the transition in steps of <paramref name="stepM"/>.</summary>
    public static LoadProfile Build(SiloModel model, FillState state, double stepM = 1.0)
    {
        ArgumentNullException.ThrowIfNull(model);
        if (!(stepM > 0.01))
        {
            throw new ArgumentOutOfRangeException(nameof(stepM), stepM, "step must be more than 0.01 m");
        }

        var notes = new List<string>();
        var filling = state with { Flow = FlowMode.Filling };
        var discharge = state with { Flow = FlowMode.Discharging };
        // EN 1991-4 measures depth from the equivalent surface (§1.5, eq. 5.78 for the heap [M]).
        var equivalent = state.ContactAboveTransitionM < 0 ? 0 : state.ContactAboveTransitionM + model.Geometry.HeapEquivalentHeightM;
        var characteristicSupported = true;
        try
        {
            _ = model.CharacteristicAt(0);
        }
        catch (NotSupportedException ex)
        {
            characteristicSupported = false;
            notes.Add(ex.Message);
        }

        var patchSupported = characteristicSupported;
        if (patchSupported)
        {
            try
            {
                _ = model.DischargePatchAt(0, state.EccentricityM);
            }
            catch (NotSupportedException ex)
            {
                patchSupported = false;
                notes.Add(ex.Message);
            }
        }

        if (model.ActionClass == ActionAssessmentClass.AAC1 && patchSupported)
        {
            notes.Add("AAC1: the standard allows a uniform increase instead of the patch [M?]; the patch is shown as for AAC2");
        }

        if (state.ContactAboveTransitionM < 0)
        {
            notes.Add("the solid is all in the hopper: no load on the vertical wall");
        }

        var rows = new List<ProfileRow>();
        var top = Math.Min(model.Geometry.WallHeightM, Math.Max(0, equivalent));
        var heights = new List<double>();
        for (var i = 0; top - (i * stepM) > 1e-9; i++)
        {
            heights.Add(top - (i * stepM));
        }

        heights.Add(0); // always end at the transition (or flat floor)
        foreach (var h in heights)
        {
            var depth = Math.Max(0, equivalent - h);
            CharacteristicPoint? characteristic = characteristicSupported ? model.CharacteristicAt(depth) : null;
            double? patch = patchSupported ? model.DischargePatchAt(depth, state.EccentricityM).PressureKPa : null;
            rows.Add(new ProfileRow(h, depth, characteristic, patch, model.WallAt(filling, h), model.WallAt(discharge, h)));
        }

        var hopperRows = new List<HopperRow>();
        var hopperHeight = model.Geometry.HopperHeightM;
        if (model.Geometry.HopperShape != HopperShape.Flat)
        {
            var hopperTop = Math.Min(hopperHeight, state.LevelM);
            for (var i = 0; hopperTop - (i * stepM) > 1e-9; i++)
            {
                var y = hopperTop - (i * stepM);
                var (pv, pn, pt) = model.HopperAt(filling, y);
                hopperRows.Add(new HopperRow(y, pv, pn, pt));
            }

            var (pv0, pn0, pt0) = model.HopperAt(filling, 0);
            hopperRows.Add(new HopperRow(0, pv0, pn0, pt0));
            notes.Add($"hopper: Walker-type p_v(x) in the form of EN 1991-4 §6.3 [M], {(model.HopperIsSteep ? "steep" : "shallow, mobilised friction (1 - K)/(2 tan beta) [M?]")}, F = {model.HopperF:0.###}, n = {model.HopperN:0.###}, filling, expected properties");
        }

        var strainsFill = new double[model.Gauges.Count];
        var strainsOut = new double[model.Gauges.Count];
        model.ExpectedStrains(filling, strainsFill);
        model.ExpectedStrains(discharge, strainsOut);
        var rings = model.Gauges
            .GroupBy(g => (g.Ring, g.Kind, g.HeightAboveTransitionM))
            .Select(group =>
            {
                var first = group.First();
                return new RingExpectation(first.Ring, first.Kind, first.HeightAboveTransitionM, group.Count(),
                    strainsFill[first.Index], strainsOut[first.Index], first.IsModelled, first.NotModelledReason);
            })
            .OrderBy(r => r.HeightAboveTransitionM)
            .ToList();

        notes.Add("expected values: Janssen with the mean (or calibrated) properties, heap as surcharge on the highest wall contact; wall loads axisymmetric, contents only");
        return new LoadProfile(state.LevelM, state.MassKg, state.VolumeM3, equivalent, model.AspectRatio, model.AspectRatioClass, model.ActionClass,
            model.Expected, model.Expect(state), rows, hopperRows, rings, notes);
    }
}
