using System.Globalization;
using System.Text.RegularExpressions;

namespace SiloWatch.Plant;

/// <summary>
/// Checks a plant definition and lists every finding (not only the first): each names the site,
/// silo, sensor, the configuration key and the bad value.
/// </summary>
public static partial class PlantValidator
{
    [GeneratedRegex(@"^[a-z0-9][a-z0-9-]{0,47}\z")]
    private static partial Regex SiteIdPattern();

    [GeneratedRegex(@"^[A-Za-z0-9][A-Za-z0-9_-]{0,47}\z")]
    private static partial Regex LocalIdPattern();

    /// <summary>True when <paramref name="id"/> follows the site id rule (used for MQTT topic levels too).</summary>
    public static bool IsValidSiteId(ReadOnlySpan<char> id) => SiteIdPattern().IsMatch(id);

    /// <summary>True when <paramref name="id"/> follows the silo/sensor id rule (used for MQTT topic levels too).</summary>
    public static bool IsValidLocalId(ReadOnlySpan<char> id) => LocalIdPattern().IsMatch(id);

    /// <summary>Units a sensor may declare, per kind.</summary>
    public static IReadOnlyList<string> AllowedUnits(SensorKind kind) => kind switch
    {
        SensorKind.Temperature => ["degC"],
        SensorKind.Outlet => ["state"],
        _ => ["mV/V"],
    };

    public static IReadOnlyList<PlantFinding> Validate(PlantOptions plant, IReadOnlySet<string>? knownMaterials = null)
    {
        var findings = new List<PlantFinding>();
        if (plant.Sites.Count == 0)
        {
            findings.Add(new("", "", "", "Plant:Sites", "", "no site is defined"));
        }

        var siteIds = new HashSet<string>(StringComparer.Ordinal);
        for (var i = 0; i < plant.Sites.Count; i++)
        {
            var site = plant.Sites[i];
            var key = $"Plant:Sites:{i}";
            if (!SiteIdPattern().IsMatch(site.Id))
            {
                findings.Add(new(site.Id, "", "", key + ":Id", site.Id, "site id must be 1-48 of a-z, 0-9 and '-', starting with a letter or digit"));
            }
            else if (!siteIds.Add(site.Id))
            {
                findings.Add(new(site.Id, "", "", key + ":Id", site.Id, "site id is used twice"));
            }

            if (site.Silos.Count == 0)
            {
                findings.Add(new(site.Id, "", "", key + ":Silos", "", "site has no silo"));
            }

            var siloIds = new HashSet<string>(StringComparer.Ordinal);
            for (var j = 0; j < site.Silos.Count; j++)
            {
                ValidateSilo(site, site.Silos[j], $"{key}:Silos:{j}", siloIds, knownMaterials, findings);
            }
        }

        return findings;
    }

    private static void ValidateSilo(SiteOptions site, SiloOptions silo, string key, HashSet<string> siloIds,
        IReadOnlySet<string>? knownMaterials, List<PlantFinding> findings)
    {
        void Add(string k, object? value, string problem, string sensor = "") =>
            findings.Add(new(site.Id, silo.Id, sensor, k, Format(value), problem));

        if (!LocalIdPattern().IsMatch(silo.Id))
        {
            Add(key + ":Id", silo.Id, "silo id must be 1-48 of letters, digits, '-' and '_'");
        }
        else if (!siloIds.Add(silo.Id))
        {
            Add(key + ":Id", silo.Id, "silo id is used twice in this site");
        }

        var g = silo.Geometry;
        var gk = key + ":Geometry";
        switch (g.Section)
        {
            case SectionShape.Circular:
                Positive(g.DiameterM, gk + ":DiameterM", "diameter must be a positive number of metres");
                break;
            case SectionShape.Square:
                Positive(g.WidthM, gk + ":WidthM", "side must be a positive number of metres");
                break;
            case SectionShape.Rectangular:
                Positive(g.WidthM, gk + ":WidthM", "width must be a positive number of metres");
                Positive(g.LengthM, gk + ":LengthM", "length must be a positive number of metres");
                if (g.LengthM < g.WidthM)
                {
                    Add(gk + ":LengthM", g.LengthM, "length must be the longer side (>= WidthM)");
                }

                break;
            default:
                Add(gk + ":Section", g.Section, "unknown section shape");
                break;
        }

        Positive(g.WallHeightM, gk + ":WallHeightM", "wall height must be a positive number of metres");
        Positive(g.WallThicknessM, gk + ":WallThicknessM", "wall thickness must be a positive number of metres");
        if (g.WallThicknessM > 0.5)
        {
            Add(gk + ":WallThicknessM", g.WallThicknessM, "wall thickness above 0.5 m: is it in metres?");
        }

        Positive(g.WallYoungsModulusGPa, gk + ":WallYoungsModulusGPa", "Young's modulus must be positive (GPa)");
        if (!(g.WallPoissonRatio is >= 0 and < 0.5))
        {
            Add(gk + ":WallPoissonRatio", g.WallPoissonRatio, "Poisson's ratio must be in [0, 0.5)");
        }

        var h = g.Hopper;
        if (h.Shape != HopperShape.Flat)
        {
            if (!(h.HalfAngleDeg is > 0 and < 90))
            {
                Add(gk + ":Hopper:HalfAngleDeg", h.HalfAngleDeg, "hopper half-angle must be between 0 and 90 degrees from the vertical");
            }

            var span = g.Section == SectionShape.Circular ? g.DiameterM : g.WidthM;
            if (!(h.OutletM >= 0) || (span > 0 && h.OutletM >= span))
            {
                Add(gk + ":Hopper:OutletM", h.OutletM, "outlet must be at least 0 and smaller than the section");
            }

            if (h.Shape == HopperShape.Conical && g.Section != SectionShape.Circular)
            {
                Add(gk + ":Hopper:Shape", h.Shape, "a conical hopper needs a circular section");
            }

            if (h.Shape == HopperShape.Pyramidal && g.Section == SectionShape.Circular)
            {
                Add(gk + ":Hopper:Shape", h.Shape, "a pyramidal hopper needs a square or rectangular section");
            }
        }

        if (silo.Material.Length == 0)
        {
            Add(key + ":Material", silo.Material, "no stored material given");
        }
        else if (knownMaterials is not null && !knownMaterials.Contains(silo.Material))
        {
            Add(key + ":Material", silo.Material, "material is not in the material library");
        }

        var w = silo.Weighing;
        var wk = key + ":Weighing";
        if (w.Arrangement is WeighingArrangement.AllSupports or WeighingArrangement.SomeSupports)
        {
            if (w.SupportCount < 3 && g.Section == SectionShape.Circular)
            {
                Add(wk + ":SupportCount", w.SupportCount, "a silo on supports needs at least 3 of them");
            }

            if (w.SupportCount < 1)
            {
                Add(wk + ":SupportCount", w.SupportCount, "support count must be at least 1");
            }

            Positive(w.SupportRadiusM, wk + ":SupportRadiusM", "support radius must be a positive number of metres");
        }

        if (!(w.StructureMassKg >= 0))
        {
            Add(wk + ":StructureMassKg", w.StructureMassKg, "structure mass must be 0 or more kg");
        }

        if (!(w.SupportCapacityKn >= 0))
        {
            Add(wk + ":SupportCapacityKn", w.SupportCapacityKn, "support capacity must be 0 (not set) or more kN");
        }

        var sensorIds = new HashSet<string>(StringComparer.Ordinal);
        var ringHeights = new Dictionary<string, (double Height, SensorKind Kind)>(StringComparer.Ordinal);
        var cellsPerSupport = new Dictionary<int, string>();
        for (var s = 0; s < silo.Sensors.Count; s++)
        {
            var sensor = silo.Sensors[s];
            var sk = $"{key}:Sensors:{s}";
            void AddS(string k, object? value, string problem) => Add(k, value, problem, sensor.Id);

            if (!LocalIdPattern().IsMatch(sensor.Id))
            {
                AddS(sk + ":Id", sensor.Id, "sensor id must be 1-48 of letters, digits, '-' and '_'");
            }
            else if (!sensorIds.Add(sensor.Id))
            {
                AddS(sk + ":Id", sensor.Id, "sensor id is used twice in this silo");
            }

            if (!AllowedUnits(sensor.Kind).Contains(sensor.Unit, StringComparer.Ordinal))
            {
                AddS(sk + ":Unit", sensor.Unit, $"unit of a {sensor.Kind} must be one of: {string.Join(", ", AllowedUnits(sensor.Kind))}");
            }

            if (sensor.ExpectedPeriod <= TimeSpan.Zero || sensor.ExpectedPeriod > TimeSpan.FromHours(1))
            {
                AddS(sk + ":ExpectedPeriod", sensor.ExpectedPeriod, "expected period must be between 0 and 1 hour");
            }

            if (double.IsNaN(sensor.RangeMin) || double.IsNaN(sensor.RangeMax) || !(sensor.RangeMax > sensor.RangeMin))
            {
                AddS(sk + ":RangeMin/RangeMax", $"{Format(sensor.RangeMin)}..{Format(sensor.RangeMax)}", "a physical range with RangeMin < RangeMax is required");
            }

            switch (sensor.Kind)
            {
                case SensorKind.LoadCell:
                    if (silo.Weighing.Arrangement == WeighingArrangement.None)
                    {
                        AddS(sk + ":Kind", sensor.Kind, "a load cell on a silo whose weighing arrangement is None");
                    }

                    PositiveS(sensor.RatedOutputMvPerV, sk + ":RatedOutputMvPerV", "rated output must be positive (mV/V, typically 1-3)");
                    if (sensor.RatedOutputMvPerV > 10)
                    {
                        AddS(sk + ":RatedOutputMvPerV", sensor.RatedOutputMvPerV, "rated output above 10 mV/V: is it in mV/V?");
                    }

                    PositiveS(sensor.CapacityKn, sk + ":CapacityKn", "capacity must be a positive number of kN");
                    PositiveS(sensor.ExcitationV, sk + ":ExcitationV", "excitation must be a positive number of volts");
                    PositiveS(sensor.SpanFactor, sk + ":SpanFactor", "span factor must be positive");
                    if (silo.Weighing.Arrangement != WeighingArrangement.FloorOnly)
                    {
                        if (sensor.Support < 1 || sensor.Support > silo.Weighing.SupportCount)
                        {
                            AddS(sk + ":Support", sensor.Support, $"support number must be 1..{silo.Weighing.SupportCount}");
                        }
                        else if (!cellsPerSupport.TryAdd(sensor.Support, sensor.Id))
                        {
                            AddS(sk + ":Support", sensor.Support, $"support already carries load cell '{cellsPerSupport[sensor.Support]}'");
                        }
                    }

                    break;
                case SensorKind.AxialStrain:
                case SensorKind.HoopStrain:
                    if (!LocalIdPattern().IsMatch(sensor.Ring))
                    {
                        AddS(sk + ":Ring", sensor.Ring, "a strain gauge needs a ring id");
                    }
                    else if (ringHeights.TryGetValue(sensor.Ring, out var ring))
                    {
                        if (Math.Abs(ring.Height - sensor.HeightM) > 1e-6)
                        {
                            AddS(sk + ":HeightM", sensor.HeightM, $"ring '{sensor.Ring}' is at {Format(ring.Height)} m; all its gauges share one height");
                        }

                        if (ring.Kind != sensor.Kind)
                        {
                            AddS(sk + ":Kind", sensor.Kind, $"ring '{sensor.Ring}' holds {ring.Kind} gauges; a ring holds one kind");
                        }
                    }
                    else
                    {
                        ringHeights[sensor.Ring] = (sensor.HeightM, sensor.Kind);
                    }

                    if (!(sensor.HeightM >= 0) || (g.WallHeightM > 0 && sensor.HeightM > g.WallHeightM))
                    {
                        AddS(sk + ":HeightM", sensor.HeightM, $"gauge height must be within the wall, 0..{Format(g.WallHeightM)} m");
                    }

                    if (!(sensor.AngleDeg is >= 0 and < 360))
                    {
                        AddS(sk + ":AngleDeg", sensor.AngleDeg, "angle must be in [0, 360) degrees from the reference mark");
                    }

                    if (!(sensor.GaugeFactor is >= 0.5 and <= 10))
                    {
                        AddS(sk + ":GaugeFactor", sensor.GaugeFactor, "gauge factor must be in 0.5..10 (foil gauges are about 2.0-2.1)");
                    }

                    PositiveS(sensor.ExcitationV, sk + ":ExcitationV", "excitation must be a positive number of volts");
                    break;
                case SensorKind.Temperature:
                    break;
                case SensorKind.Outlet:
                    if (sensor.RangeMin != 0 || sensor.RangeMax != 1)
                    {
                        AddS(sk + ":RangeMin/RangeMax", $"{Format(sensor.RangeMin)}..{Format(sensor.RangeMax)}", "an outlet signal is 0 (closed, stopped) or 1 (open, running): its range must be 0..1");
                    }

                    if (sensor.TemperatureSensor.Length > 0)
                    {
                        AddS(sk + ":TemperatureSensor", sensor.TemperatureSensor, "an outlet signal has no temperature compensation");
                    }

                    break;
                default:
                    AddS(sk + ":Kind", sensor.Kind, "unknown sensor kind");
                    break;
            }

            void PositiveS(double v, string k, string problem)
            {
                if (!(v > 0) || double.IsInfinity(v))
                {
                    AddS(k, v, problem);
                }
            }
        }

        for (var s = 0; s < silo.Sensors.Count; s++)
        {
            var sensor = silo.Sensors[s];
            if (sensor.TemperatureSensor.Length > 0 &&
                !silo.Sensors.Exists(o => o.Id == sensor.TemperatureSensor && o.Kind == SensorKind.Temperature))
            {
                Add($"{key}:Sensors:{s}:TemperatureSensor", sensor.TemperatureSensor, "no temperature sensor with this id in the silo", sensor.Id);
            }
        }

        if (silo.Weighing.Arrangement is WeighingArrangement.AllSupports &&
            silo.Sensors.Count(x => x.Kind == SensorKind.LoadCell) != silo.Weighing.SupportCount)
        {
            Add(wk + ":Arrangement", silo.Weighing.Arrangement,
                $"all supports weighed, but {silo.Sensors.Count(x => x.Kind == SensorKind.LoadCell)} load cells for {silo.Weighing.SupportCount} supports");
        }

        if (silo.Weighing.Arrangement is WeighingArrangement.SomeSupports &&
            silo.Sensors.Count(x => x.Kind == SensorKind.LoadCell) is var n && (n == 0 || n >= silo.Weighing.SupportCount))
        {
            Add(wk + ":Arrangement", silo.Weighing.Arrangement,
                $"some supports weighed needs 1..{silo.Weighing.SupportCount - 1} load cells, found {n}");
        }

        if (silo.Weighing.Arrangement is WeighingArrangement.FloorOnly &&
            !silo.Sensors.Exists(x => x.Kind == SensorKind.LoadCell))
        {
            Add(wk + ":Arrangement", silo.Weighing.Arrangement, "floor weighing needs at least one load cell");
        }

        var a = silo.AlarmLimits;
        var ak = key + ":AlarmLimits";
        if (!(a.OverfillPercent is > 0 and <= 100))
        {
            Add(ak + ":OverfillPercent", a.OverfillPercent, "overfill limit must be in (0, 100] percent of capacity");
        }

        if (!(a.SupportOverloadPercent is > 0 and <= 200))
        {
            Add(ak + ":SupportOverloadPercent", a.SupportOverloadPercent, "support overload limit must be in (0, 200] percent");
        }

        if (!(a.AsymmetryRatioA1 > 0))
        {
            Add(ak + ":AsymmetryRatioA1", a.AsymmetryRatioA1, "asymmetry limit must be positive");
        }

        if (!(a.ExcessLoadRatio > 0))
        {
            Add(ak + ":ExcessLoadRatio", a.ExcessLoadRatio, "excess load ratio must be positive");
        }

        if (!(a.IdleMassChangeKgPerMin > 0))
        {
            Add(ak + ":IdleMassChangeKgPerMin", a.IdleMassChangeKgPerMin, "idle mass-change limit must be positive");
        }

        if (a.EngineerApproved && string.IsNullOrWhiteSpace(a.ApprovedBy))
        {
            Add(ak + ":ApprovedBy", a.ApprovedBy, "limits marked approved must say who approved them and under which code");
        }

        void Positive(double v, string k, string problem)
        {
            if (!(v > 0) || double.IsInfinity(v))
            {
                Add(k, v, problem);
            }
        }
    }

    private static string Format(object? value) => value switch
    {
        null => "",
        double d => d.ToString("R", CultureInfo.InvariantCulture),
        IFormattable f => f.ToString(null, CultureInfo.InvariantCulture),
        _ => value.ToString() ?? "",
    };
}
