using System.CommandLine;
using System.Globalization;
using System.Text.Json;
using System.Text.Json.Serialization;
using SiloWatch.Mechanics;
using SiloWatch.Plant;

namespace SiloWatch.Cli;

/// <summary>
/// `silowatch profile`: the expected load profile of one configured silo (EN 1991-4 characteristic
/// loads beside the monitoring expectation) and the expected strain per gauge ring, as a table or JSON.
/// </summary>
internal static class ProfileCommand
{
    private static readonly JsonSerializerOptions Json = new()
    {
        WriteIndented = true,
        NumberHandling = JsonNumberHandling.AllowNamedFloatingPointLiterals,
        PropertyNamingPolicy = JsonNamingPolicy.CamelCase,
        // Output for tools and people on a console, never embedded in HTML: keep § and μ readable.
        Encoder = System.Text.Encodings.Web.JavaScriptEncoder.UnsafeRelaxedJsonEscaping,
        Converters = { new JsonStringEnumConverter() },
    };

    public static Command Create()
    {
        var siloOption = new Option<string>("--silo", "-s")
        {
            Description = "Silo as site/silo, e.g. brackenford/S1",
            Required = true,
        };
        var plantOption = CliOptions.Plant();
        var materialsOption = CliOptions.Materials();
        var levelOption = new Option<double?>("--level") { Description = "Fill level, m from the hopper outlet (or flat floor) to the highest wall contact" };
        var massOption = new Option<double?>("--mass") { Description = "Contents mass, kg (default: full to capacity)" };
        var stepOption = new Option<double>("--step")
        {
            Description = "Height step of the profile, m",
            DefaultValueFactory = _ => 1.0,
        };
        var eccentricityOption = new Option<double>("--eccentricity")
        {
            Description = "Offset of the contents' centre of gravity from the axis, m (support reactions; the patch's filling eccentricity)",
            DefaultValueFactory = _ => 0.0,
        };
        var azimuthOption = new Option<double>("--azimuth")
        {
            Description = "Direction of that offset, degrees from the reference mark, clockwise seen from above",
            DefaultValueFactory = _ => 0.0,
        };
        var jsonOption = new Option<bool>("--json") { Description = "Write JSON (for tools) instead of a table" };

        var command = new Command("profile", "Print the expected load profile of a configured silo: EN 1991-4 characteristic loads and the monitoring expectation per gauge ring")
        {
            siloOption, plantOption, materialsOption, levelOption, massOption, stepOption, eccentricityOption, azimuthOption, jsonOption,
        };

        command.SetAction(parse =>
        {
            var key = parse.GetValue(siloOption)!;
            var plantFile = parse.GetValue(plantOption)!;
            var materialsFile = parse.GetValue(materialsOption)!;
            var level = parse.GetValue(levelOption);
            var mass = parse.GetValue(massOption);
            var step = parse.GetValue(stepOption);
            var e = parse.GetValue(eccentricityOption);
            var azimuth = parse.GetValue(azimuthOption);
            if (level is not null && mass is not null)
            {
                Console.Error.WriteLine("give --level or --mass, not both");
                return 2;
            }

            if (!(step > 0.01))
            {
                Console.Error.WriteLine($"--step must be more than 0.01 m (got {step.ToString(CultureInfo.InvariantCulture)})");
                return 2;
            }

            MaterialLibrary library;
            try
            {
                library = MaterialLibrary.Load(materialsFile.FullName);
            }
            catch (MaterialLibraryException ex)
            {
                Console.Error.WriteLine(ex.Message);
                return 1;
            }

            var (plant, findings) = PlantLoader.LoadFile(plantFile.FullName, library.Names);
            if (findings.Count > 0)
            {
                foreach (var finding in findings)
                {
                    Console.Error.WriteLine(finding.ToString());
                }

                Console.Error.WriteLine($"{findings.Count} finding(s) in {plantFile.FullName}: run `silowatch verify`");
                return 1;
            }

            var registry = new PlantRegistry(plant);
            if (!registry.TryGetSilo(key, out var siloRef))
            {
                Console.Error.WriteLine($"silo '{key}' is not in {plantFile.FullName} (known: {string.Join(", ", registry.Silos.Select(s => s.Key))})");
                return 1;
            }

            try
            {
                var model = SiloModel.Create(siloRef.Options, library.Get(siloRef.Options.Material));
                FillState state;
                if (level is { } l)
                {
                    if (!(l >= 0 && l <= model.Geometry.MaxLevelM))
                    {
                        Console.Error.WriteLine($"--level must be in [0, {model.Geometry.MaxLevelM:0.###}] m for {key}");
                        return 2;
                    }

                    state = model.StateAtLevel(l, FlowMode.Filling, e, azimuth);
                }
                else
                {
                    state = model.StateAtMass(mass ?? model.CapacityKg, FlowMode.Filling, e, azimuth);
                }

                var profile = LoadProfile.Build(model, state, step);
                var reactions = new double[Math.Max(0, model.SupportCount)];
                string? reactionsNote = null;
                try
                {
                    model.SupportReactionsKn(state, reactions);
                }
                catch (NotSupportedException ex)
                {
                    reactionsNote = ex.Message;
                    reactions = [];
                }

                if (parse.GetValue(jsonOption))
                {
                    WriteJson(key, model, profile, reactions, reactionsNote);
                }
                else
                {
                    WriteTable(key, model, profile, reactions, reactionsNote);
                }

                return 0;
            }
            catch (NotSupportedException ex)
            {
                Console.Error.WriteLine($"{key}: not modelled: {ex.Message}");
                return 1;
            }
        });
        return command;
    }

    private static void WriteTable(string key, SiloModel model, LoadProfile p, double[] reactions, string? reactionsNote)
    {
        var o = Console.Out;
        var g = model.Geometry;
        var inv = CultureInfo.InvariantCulture;
        string F(double v, string format = "0.00") => double.IsNaN(v) ? "-" : v.ToString(format, inv);
        o.WriteLine($"Expected load profile: {key} ({model.Silo.Name}), {model.Material.Name} ({model.Material.Source}; {model.Material.Confidence})");
        o.WriteLine($"CAUTION: {LoadProfile.Caution}");
        o.WriteLine();
        o.WriteLine($"section {g.Section} {F(g.WidthM)}{(g.Section == SectionShape.Rectangular ? " x " + F(g.LengthM) : "")} m, wall {F(g.WallHeightM)} m, hopper {g.HopperShape}{(g.HopperShape == HopperShape.Flat ? "" : $" {F(g.HopperHalfAngleDeg, "0.#")} deg, {F(g.HopperHeightM)} m, {(model.HopperIsSteep ? "steep" : "shallow")} (EN 1991-4 eq. 6.1)")}");
        o.WriteLine($"A = {F(g.AreaM2)} m2, U = {F(g.PerimeterM)} m, A/U = {F(g.HydraulicRadiusM, "0.000")} m, capacity {F(model.CapacityM3, "0.0")} m3 = {F(model.CapacityKg / 1000, "0.0")} t (mean density)");
        o.WriteLine($"aspect ratio h_c/d_c = {F(p.AspectRatio)}: {p.AspectRatioClass} (EN 1991-4 §1.5 [M]); action class {p.ActionClass} (EN 1991-4 §2.5 Table 2.1 [M]; {F(model.CapacityTonnesUpper, "0")} t at upper unit weight)");
        o.WriteLine($"fill: level {F(p.LevelM)} m (outlet/floor to highest wall contact), {F(p.MassKg / 1000, "0.0")} t, {F(p.VolumeM3, "0.0")} m3, equivalent surface {F(p.EquivalentSurfaceAboveTransitionM)} m above the transition");
        o.WriteLine($"expected properties: gamma {F(p.Expected.UnitWeightKnM3)} kN/m3, K {F(p.Expected.K, "0.000")}, mu {F(p.Expected.Mu, "0.000")} ({model.WallCategory}), z0 = {F(model.CharacteristicDepthM)} m");
        o.WriteLine();
        o.WriteLine("Vertical wall, kPa and kN/m. Characteristic (EN 1991-4:2006 §5.2.1.1 filling, §5.2.2 discharge [M]):");
        o.WriteLine("  p_hf eq.5.1 (K_u, mu_l)   p_wf eq.5.2 (K_u, mu_u)   p_vf eq.5.3 (K_l, mu_l)   n_zSk eq.5.7 (K_u, mu_u)");
        o.WriteLine($"  p_he = {F(model.Factors.DischargeHorizontalCh)}·p_hf, p_we = {F(model.Factors.DischargeFrictionCw)}·p_wf, n_ze = C_w·n_zSk [M?]; p_pe = C_pe·p_he, s = pi·d_c/16 (§5.2.2.2 [M?])");
        o.WriteLine("Expected (monitoring, Janssen mean properties [D]): p_h, p_v, n_z filling / discharge.");
        o.WriteLine();
        o.WriteLine($"{"height",7} {"depth",6} | {"p_hf",7} {"p_wf",7} {"p_vf",7} {"n_zSk",8} | {"p_he",7} {"p_we",7} {"n_ze",8} {"p_pe",7} | {"p_h",7} {"p_v",7} {"n_z",8} {"p_h,e",7} {"n_z,e",8}");
        foreach (var r in p.Rows)
        {
            var c = r.Characteristic;
            var cf = c?.Filling ?? new WallLoads(double.NaN, double.NaN, double.NaN, double.NaN);
            var cd = c?.Discharge ?? new WallLoads(double.NaN, double.NaN, double.NaN, double.NaN);
            o.WriteLine($"{F(r.HeightAboveTransitionM),7} {F(r.DepthBelowEquivalentSurfaceM),6} | {F(cf.HorizontalKPa),7} {F(cf.WallFrictionKPa),7} {F(cf.VerticalKPa),7} {F(cf.AxialForceKnPerM, "0.0"),8} | {F(cd.HorizontalKPa),7} {F(cd.WallFrictionKPa),7} {F(cd.AxialForceKnPerM, "0.0"),8} {F(r.DischargePatchKPa ?? double.NaN),7} | {F(r.ExpectedFilling.HorizontalKPa),7} {F(r.ExpectedFilling.VerticalKPa),7} {F(r.ExpectedFilling.AxialForceKnPerM, "0.0"),8} {F(r.ExpectedDischarge.HorizontalKPa),7} {F(r.ExpectedDischarge.AxialForceKnPerM, "0.0"),8}");
        }

        if (p.HopperRows.Count > 0)
        {
            o.WriteLine();
            o.WriteLine($"Hopper wall (expected, filling), kPa: p_v, p_n = F·p_v, p_t = mu_h·p_n [D; EN 1991-4 §6.3 form, M]:");
            o.WriteLine($"{"above outlet",12} {"p_v",8} {"p_n",8} {"p_t",8}");
            foreach (var h in p.HopperRows)
            {
                o.WriteLine($"{F(h.HeightAboveOutletM),12} {F(h.VerticalKPa),8} {F(h.NormalKPa),8} {F(h.FrictionKPa),8}");
            }
        }

        o.WriteLine();
        if (p.Rings.Count == 0)
        {
            o.WriteLine("No wall strain gauges configured.");
        }
        else
        {
            o.WriteLine("Expected strain per gauge ring, microstrain (tension +), biaxial Hooke on n_z and n_theta = p_h·r [D]:");
            o.WriteLine($"{"ring",-6} {"kind",-12} {"height",7} {"gauges",6} {"filling",9} {"discharge",9}");
            foreach (var ring in p.Rings)
            {
                var tail = ring.IsModelled ? "" : $"  not modelled: {ring.NotModelledReason}";
                o.WriteLine($"{ring.Ring,-6} {ring.Kind,-12} {F(ring.HeightAboveTransitionM),7} {ring.GaugeCount,6} {F(ring.FillingStrainMicro, "0.0"),9} {F(ring.DischargeStrainMicro, "0.0"),9}{tail}");
            }
        }

        o.WriteLine();
        var loads = p.Loads;
        o.WriteLine($"contents {F(loads.ContentsWeightKn, "0.0")} kN; floor/hopper {F(loads.FloorLoadKn, "0.0")} kN; wall friction {F(loads.WallFrictionKn, "0.0")} kN; p_v at transition {F(loads.TransitionVerticalKPa)} kPa");
        o.WriteLine($"weighed load ({model.Silo.Weighing.Arrangement}, incl. structure): {F(loads.WeighedLoadKn, "0.0")} kN");
        if (reactions.Length > 0)
        {
            var label = model.Silo.Weighing.Arrangement == WeighingArrangement.FloorOnly
                ? "floor cells, kN (equal shares of the floor load)"
                : "contents' support reactions, kN (rigid base [D])";
            o.WriteLine($"{label}: " + string.Join(", ", reactions.Select((r, i) => $"{i + 1}{(model.IsSupportWeighed(i) ? "*" : "")} {F(r, "0.0")}")) + "   (* weighed)");
        }
        else if (reactionsNote is not null)
        {
            o.WriteLine($"support reactions: {reactionsNote}");
        }

        foreach (var note in p.Notes)
        {
            o.WriteLine($"note: {note}");
        }

        o.WriteLine($"CAUTION: {LoadProfile.Caution}");
    }

    private static void WriteJson(string key, SiloModel model, LoadProfile p, double[] reactions, string? reactionsNote)
    {
        var g = model.Geometry;
        var doc = new
        {
            silo = key,
            caution = LoadProfile.Caution,
            material = new { model.Material.Name, model.Material.Source, model.Material.Confidence },
            geometry = new
            {
                section = g.Section,
                widthM = g.WidthM,
                lengthM = g.LengthM,
                wallHeightM = g.WallHeightM,
                hopper = g.HopperShape,
                hopperHeightM = g.HopperHeightM,
                hopperSteep = g.HopperShape == HopperShape.Flat ? (bool?)null : model.HopperIsSteep,
                areaM2 = g.AreaM2,
                perimeterM = g.PerimeterM,
                hydraulicRadiusM = g.HydraulicRadiusM,
                capacityM3 = model.CapacityM3,
                capacityKg = model.CapacityKg,
            },
            classification = new
            {
                aspectRatio = p.AspectRatio,
                aspectRatioClass = p.AspectRatioClass,
                aspectRatioClause = "EN 1991-4 §1.5 [M]",
                actionClass = p.ActionClass,
                actionClassClause = "EN 1991-4 §2.5 Table 2.1 [M]",
                capacityTonnesUpper = model.CapacityTonnesUpper,
            },
            fill = new { levelM = p.LevelM, massKg = p.MassKg, volumeM3 = p.VolumeM3, equivalentSurfaceAboveTransitionM = p.EquivalentSurfaceAboveTransitionM },
            expectedProperties = new { unitWeightKnM3 = p.Expected.UnitWeightKnM3, k = p.Expected.K, mu = p.Expected.Mu, z0M = model.CharacteristicDepthM },
            clauses = new Dictionary<string, string>
            {
                ["p_hf"] = "EN 1991-4 §5.2.1.1 eq. 5.1, K upper, mu lower [M]",
                ["p_wf"] = "EN 1991-4 §5.2.1.1 eq. 5.2, K upper, mu upper [M]",
                ["p_vf"] = "EN 1991-4 §5.2.1.1 eq. 5.3, K lower, mu lower [M]",
                ["n_zSk"] = "EN 1991-4 §5.2.1.1 eq. 5.7, K upper, mu upper [M]",
                ["p_he"] = $"EN 1991-4 §5.2.2: C_h = {model.Factors.DischargeHorizontalCh} x p_hf [M?]",
                ["p_we"] = $"EN 1991-4 §5.2.2: C_w = {model.Factors.DischargeFrictionCw} x p_wf [M?]",
                ["p_pe"] = "EN 1991-4 §5.2.2.2: C_pe x p_he, s = pi d_c/16 [M?]",
                ["expected"] = "Janssen, mean or calibrated properties, heap as surcharge [D]",
            },
            rows = p.Rows.Select(r => new
            {
                heightM = r.HeightAboveTransitionM,
                depthM = r.DepthBelowEquivalentSurfaceM,
                characteristic = r.Characteristic is { } c ? new
                {
                    filling = new { p_hf = c.Filling.HorizontalKPa, p_wf = c.Filling.WallFrictionKPa, p_vf = c.Filling.VerticalKPa, n_zSk = c.Filling.AxialForceKnPerM },
                    discharge = new { p_he = c.Discharge.HorizontalKPa, p_we = c.Discharge.WallFrictionKPa, p_ve = c.Discharge.VerticalKPa, n_ze = c.Discharge.AxialForceKnPerM, p_pe = r.DischargePatchKPa },
                } : null,
                expected = new
                {
                    filling = new { p_h = r.ExpectedFilling.HorizontalKPa, p_v = r.ExpectedFilling.VerticalKPa, p_w = r.ExpectedFilling.WallFrictionKPa, n_z = r.ExpectedFilling.AxialForceKnPerM, n_theta = r.ExpectedFilling.HoopForceKnPerM },
                    discharge = new { p_h = r.ExpectedDischarge.HorizontalKPa, p_v = r.ExpectedDischarge.VerticalKPa, p_w = r.ExpectedDischarge.WallFrictionKPa, n_z = r.ExpectedDischarge.AxialForceKnPerM, n_theta = r.ExpectedDischarge.HoopForceKnPerM },
                },
            }),
            hopper = p.HopperRows.Select(h => new { heightAboveOutletM = h.HeightAboveOutletM, p_v = h.VerticalKPa, p_n = h.NormalKPa, p_t = h.FrictionKPa }),
            rings = p.Rings.Select(r => new
            {
                ring = r.Ring,
                kind = r.Kind,
                heightM = r.HeightAboveTransitionM,
                gauges = r.GaugeCount,
                fillingStrainMicro = r.IsModelled ? r.FillingStrainMicro : (double?)null,
                dischargeStrainMicro = r.IsModelled ? r.DischargeStrainMicro : (double?)null,
                notModelled = r.IsModelled ? null : r.NotModelledReason,
            }),
            loads = new
            {
                contentsKn = p.Loads.ContentsWeightKn,
                floorKn = p.Loads.FloorLoadKn,
                wallFrictionKn = p.Loads.WallFrictionKn,
                weighedKn = double.IsNaN(p.Loads.WeighedLoadKn) ? (double?)null : p.Loads.WeighedLoadKn,
                arrangement = model.Silo.Weighing.Arrangement,
                transitionVerticalKPa = p.Loads.TransitionVerticalKPa,
                supportReactionsKn = reactions,
                supportReactionsNote = reactionsNote,
            },
            notes = p.Notes,
        };
        Console.Out.WriteLine(JsonSerializer.Serialize(doc, Json));
    }
}
