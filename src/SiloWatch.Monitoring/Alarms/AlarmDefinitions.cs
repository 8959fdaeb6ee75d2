using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Alarms;

/// <summary>Delays, deadbands and priorities of the alarms built by <see cref="AlarmDefinitions.ForSilo"/>. Defaults stated on each property.</summary>
public sealed class AlarmDefinitionOptions
{
    /// <summary>On-delay of the wall-load alarms (asymmetry, excess). Default 5 s.</summary>
    public TimeSpan WallOnDelay { get; set; } = TimeSpan.FromSeconds(5);

    /// <summary>Off-delay of the wall-load alarms. Default 20 s.</summary>
    public TimeSpan WallOffDelay { get; set; } = TimeSpan.FromSeconds(20);

    /// <summary>Deadband of the ratio alarms (A1/A0, A2/A0, measured/expected). Default 0.05.</summary>
    public double RatioDeadband { get; set; } = 0.05;

    /// <summary>Wall-load alarms latch until reset. Default true: a structural warning must be seen and reset by a person.</summary>
    public bool LatchWallAlarms { get; set; } = true;

    /// <summary>Setpoint of the second-harmonic ratio A2/A0; null (default) defines no A2 alarm (the index is still published).</summary>
    public double? AsymmetryRatioA2 { get; set; }

    /// <summary>Overfill on-delay. Default 10 s; deadband 1 percentage point.</summary>
    public TimeSpan OverfillOnDelay { get; set; } = TimeSpan.FromSeconds(10);

    /// <summary>Support overload on-delay. Default 5 s; deadband 2 percentage points.</summary>
    public TimeSpan SupportOnDelay { get; set; } = TimeSpan.FromSeconds(5);

    /// <summary>Idle mass change on-delay. Default 20 s (longer than the discharge onset delay, so a starting discharge is not an idle change).</summary>
    public TimeSpan IdleChangeOnDelay { get; set; } = TimeSpan.FromSeconds(20);

    /// <summary>A sensor bad for longer than this raises its fault alarm. Default 60 s.</summary>
    public TimeSpan SensorBadDelay { get; set; } = TimeSpan.FromSeconds(60);
}

/// <summary>
/// The alarms of one silo from its plant limits (<see cref="AlarmLimitOptions"/>). The limits are the
/// structural engineer's; the texts say so and say what to do.
/// </summary>
public static class AlarmDefinitions
{
    /// <summary>Caution carried by every wall-load alarm text (own words; DOMAIN.md §6).</summary>
    public const string WallLoadAction =
        "Stop or slow the discharge as the site procedure says, keep people clear of the silo and tell the structural engineer. Never enter the silo.";

    public const string LimitsNote = "Limits are set by the structural engineer under the local code.";

    public const string PlaceholderNote = "These limits are placeholders, not yet approved by a structural engineer.";

    // A text is the same for every silo with the same limits, rings and sensor names: held once, not once per silo
    // (hundreds of silos, a few kB of texts each).
    private static string Shared(string text) => string.Intern(text);

    public static IReadOnlyList<AlarmDefinition> ForSilo(SiloRef silo, SiloModel model, AlarmDefinitionOptions? options = null)
    {
        ArgumentNullException.ThrowIfNull(silo);
        ArgumentNullException.ThrowIfNull(model);
        var o = options ?? new AlarmDefinitionOptions();
        var limits = silo.Options.AlarmLimits;
        var note = limits.EngineerApproved ? LimitsNote : LimitsNote + " " + PlaceholderNote;
        var site = silo.SiteId;
        var id = silo.SiloId;
        var list = new List<AlarmDefinition>();
        IReadOnlyList<DischargeState> discharging = [DischargeState.Discharging];
        IReadOnlyList<DischargeState> idle = [DischargeState.Idle];

        foreach (var ring in model.Gauges.Where(g => !string.IsNullOrEmpty(g.Ring)).GroupBy(g => g.Ring, StringComparer.Ordinal))
        {
            if (!ring.Any(g => g.IsModelled))
            {
                // No expected load: the indices cannot be formed (e.g. a square section); no alarm rather than a meaningless one.
                continue;
            }

            var what = ring.First().Kind == SensorKind.AxialStrain ? "axial" : "hoop";
            list.Add(new AlarmDefinition($"{site}/{id}/asymmetry-a1-{ring.Key}", site, id, ConditionKeys.AsymmetryA1(id, ring.Key), "ratio", AlarmDirection.High,
                limits.AsymmetryRatioA1, o.RatioDeadband, 2, o.WallOnDelay, o.WallOffDelay, o.LatchWallAlarms, discharging,
                Shared($"uneven {what} wall load at ring {ring.Key} during discharge (first harmonic over mean above {limits.AsymmetryRatioA1:0.##}); a flow channel or eccentric flow is likely. {WallLoadAction} {note}")));
            if (o.AsymmetryRatioA2 is { } a2)
            {
                list.Add(new AlarmDefinition($"{site}/{id}/asymmetry-a2-{ring.Key}", site, id, ConditionKeys.AsymmetryA2(id, ring.Key), "ratio", AlarmDirection.High,
                    a2, o.RatioDeadband, 2, o.WallOnDelay, o.WallOffDelay, o.LatchWallAlarms, discharging,
                    Shared($"ovalising {what} wall load at ring {ring.Key} during discharge (second harmonic over mean above {a2:0.##}). {WallLoadAction} {note}")));
            }

            list.Add(new AlarmDefinition($"{site}/{id}/excess-{ring.Key}", site, id, ConditionKeys.Excess(id, ring.Key), "ratio", AlarmDirection.High,
                limits.ExcessLoadRatio, o.RatioDeadband, 1, o.WallOnDelay, o.WallOffDelay, o.LatchWallAlarms, discharging,
                Shared($"{what} wall load at ring {ring.Key} above {limits.ExcessLoadRatio:0.##} times the expected discharge load. {WallLoadAction} {note}")));
        }

        list.Add(new AlarmDefinition($"{site}/{id}/overfill", site, id, ConditionKeys.Overfill(id), "%", AlarmDirection.High,
            limits.OverfillPercent, 1.0, 1, o.OverfillOnDelay, TimeSpan.FromSeconds(30), false, null,
            Shared($"contents above {limits.OverfillPercent:0.#} % of capacity. Stop filling; check the level and the vent before filling again. {note}")));

        if (silo.Options.Weighing.SupportCapacityKn > 0 && silo.Options.Weighing.SupportCount > 0)
        {
            list.Add(new AlarmDefinition($"{site}/{id}/support-overload", site, id, ConditionKeys.SupportOverload(id), "%", AlarmDirection.High,
                limits.SupportOverloadPercent, 2.0, 1, o.SupportOnDelay, TimeSpan.FromSeconds(30), false, null,
                Shared($"a support carries more than {limits.SupportOverloadPercent:0.#} % of its rated capacity. Stop filling, keep people clear of the supports and tell the structural engineer. {note}")));
        }

        list.Add(new AlarmDefinition($"{site}/{id}/idle-mass-change", site, id, ConditionKeys.IdleMassChange(id), "kg/min", AlarmDirection.High,
            limits.IdleMassChangeKgPerMin, 0.2 * limits.IdleMassChangeKgPerMin, 3, o.IdleChangeOnDelay, TimeSpan.FromSeconds(60), false, idle,
            Shared($"mass changing faster than {limits.IdleMassChangeKgPerMin:0} kg/min while no fill or discharge is running: a leak, a hang-up letting go, or a sensor fault. Check the outlet and the sensors from outside; never enter the silo to clear a hang-up. {note}")));

        foreach (var s in silo.Options.Sensors)
        {
            var kind = s.Kind switch
            {
                SensorKind.LoadCell => "load cell",
                SensorKind.AxialStrain => "axial wall gauge",
                SensorKind.HoopStrain => "hoop wall gauge",
                SensorKind.Outlet => "outlet signal",
                _ => "temperature sensor",
            };
            list.Add(new AlarmDefinition($"{site}/{id}/sensor-bad-{s.Id}", site, id, ConditionKeys.SensorBad(id, s.Id), "bad", AlarmDirection.High,
                0.5, 0.0, s.Kind == SensorKind.Temperature ? 4 : 3, o.SensorBadDelay, TimeSpan.FromSeconds(10), false, null,
                Shared($"{kind} {s.Id} has given bad data for more than {o.SensorBadDelay.TotalSeconds:0} s; the numbers that use it are degraded or unavailable. Send maintenance to check it.")));
        }

        return list;
    }
}
