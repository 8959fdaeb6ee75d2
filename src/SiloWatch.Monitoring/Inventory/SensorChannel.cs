using SiloWatch.Plant;

namespace SiloWatch.Monitoring;

/// <summary>Per-sensor state of one silo's monitor: last values, quality detectors, tare. Mutable, owned by one thread.</summary>
internal sealed class SensorChannel
{
    public SensorChannel(int index, SensorOptions options, MonitoringOptions monitoring)
    {
        Index = index;
        Options = options;
        Kind = options.Kind;
        PeriodMs = Math.Max(1L, (long)options.ExpectedPeriod.TotalMilliseconds);
        StaleAfterMs = (long)Math.Ceiling(PeriodMs * monitoring.StaleMultiple);
        var isTemperature = Kind == SensorKind.Temperature;

        // An outlet signal (0 or 1) rests for hours, sits at the ends of its range and steps: not stuck, saturated or spiking.
        var isOutlet = Kind == SensorKind.Outlet;
        Stuck = new StuckDetector(
            isOutlet ? long.MaxValue : (long)(isTemperature ? monitoring.TemperatureStuckWindow : monitoring.StuckWindow).TotalMilliseconds,
            isTemperature ? 0.0 : monitoring.StuckToleranceMvPerV);
        Spike = new SpikeDetector(monitoring.SpikeWindowSamples, isOutlet ? double.PositiveInfinity : monitoring.SpikeThreshold,
            isTemperature ? monitoring.SpikeSigmaFloorK : monitoring.SpikeSigmaFloorMvPerV);
        EngineeringUnit = Kind switch
        {
            SensorKind.LoadCell => "kN",
            SensorKind.AxialStrain or SensorKind.HoopStrain => "microstrain",
            SensorKind.Outlet => "state",
            _ => "degC",
        };
        if (!isOutlet && !double.IsNaN(options.RangeMin) && !double.IsNaN(options.RangeMax) && options.RangeMax > options.RangeMin)
        {
            var margin = monitoring.SaturationMarginFraction * (options.RangeMax - options.RangeMin);
            SaturationLow = options.RangeMin + margin;
            SaturationHigh = options.RangeMax - margin;
        }
        else
        {
            SaturationLow = double.NegativeInfinity;
            SaturationHigh = double.PositiveInfinity;
        }

        if (monitoring.ConverterInputRangeMv > 0 && options.ExcitationV > 0)
        {
            // The converter clips the bridge output in mV; in the transmitted mV/V that is range/excitation.
            var limit = (1 - monitoring.SaturationMarginFraction) * monitoring.ConverterInputRangeMv / options.ExcitationV;
            SaturationLow = Math.Max(SaturationLow, -limit);
            SaturationHigh = Math.Min(SaturationHigh, limit);
        }

        // Noise in the engineering unit, floored at the spike detector's σ floor converted from mV/V.
        var floor = Kind switch
        {
            SensorKind.LoadCell when options.RatedOutputMvPerV > 0 => monitoring.SpikeSigmaFloorMvPerV * LoadCellConversion.KnPerMvPerV(options),
            SensorKind.AxialStrain or SensorKind.HoopStrain when options.GaugeFactor > 0 =>
                BridgeEquations.StrainMicroFromMvPerV(options.Bridge, monitoring.SpikeSigmaFloorMvPerV, options.GaugeFactor),
            _ => monitoring.SpikeSigmaFloorK,
        };
        Noise = new NoiseEstimator(0.02, floor * floor);
    }

    public int Index { get; }

    public SensorOptions Options { get; }

    public SensorKind Kind { get; }

    public string EngineeringUnit { get; }

    public long PeriodMs { get; }

    public long StaleAfterMs { get; }

    public double SaturationLow { get; }

    public double SaturationHigh { get; }

    public SpikeDetector Spike { get; }

    public StuckDetector Stuck;

    public NoiseEstimator Noise;

    /// <summary>Index of the paired temperature channel, −1 if none.</summary>
    public int TemperatureChannel { get; set; } = -1;

    /// <summary>Position among the silo's weighing cells, −1 if not one.</summary>
    public int CellIndex { get; set; } = -1;

    /// <summary>Position among the gauges of the base axial ring, −1 if not one.</summary>
    public int RingIndex { get; set; } = -1;

    public double AngleRad { get; set; }

    public long LastMs { get; set; } = long.MinValue;

    /// <summary>Temperature the last value was compensated at, degC.</summary>
    public double LastTemperatureC { get; set; } = double.NaN;

    /// <summary>Temperature at the tare, degC.</summary>
    public double TareTemperatureC { get; set; } = double.NaN;

    public double Raw { get; set; } = double.NaN;

    /// <summary>Last accepted engineering value (a rejected sample keeps the previous one).</summary>
    public double Value { get; set; } = double.NaN;

    /// <summary>Flags of the last sample (stale is added when read, against the time it is judged at: SiloMonitor.ArrivalsSeenUntil).</summary>
    public QualityFlags SampleFlags { get; set; } = QualityFlags.NoData;

    /// <summary>Drift flag set by the share detector (kept apart from the per-sample flags).</summary>
    public bool Drifting { get; set; }

    /// <summary>Engineering value at the tare (gross kN for cells, microstrain for gauges); NaN if never tared.</summary>
    public double TareValue { get; set; } = double.NaN;

    public QualityFlags FlagsAt(long nowMs)
    {
        if (LastMs == long.MinValue)
        {
            return QualityFlags.NoData;
        }

        var flags = SampleFlags;
        if (nowMs - LastMs > StaleAfterMs)
        {
            flags |= QualityFlags.Stale;
        }

        if (Drifting)
        {
            flags |= QualityFlags.Drift;
        }

        return flags;
    }

    /// <summary>Usable in an estimate at a time: a value exists and the sensor is not bad.</summary>
    public bool UsableAt(long nowMs) => !double.IsNaN(Value) && FlagsAt(nowMs).Severity() != Quality.Bad;
}
