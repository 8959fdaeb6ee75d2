namespace SiloWatch.Monitoring;

/// <summary>
/// Kalman filter on x = [mass kg, rate kg/s] with a constant-rate model driven by white
/// acceleration noise: F = [[1, dt], [0, 1]], Q = q·[[dt³/3, dt²/2], [dt²/2, dt]]
/// [M: the standard discrete white-noise-acceleration model, e.g. Bar-Shalom, from memory].
/// The 2×2 algebra is unrolled so an update costs a few dozen flops and allocates nothing; the
/// tests check it against MathNet matrices and a batch least-squares solution.
/// When the rate changes (a fill or discharge starts or stops) the innovations grow; a normalised
/// innovation above the gate scales Q up for that step so the filter follows in a few samples
/// instead of lagging for minutes.
/// </summary>
public sealed class MassRateFilter
{
    private readonly double _q;
    private readonly double _initialRateVar;
    private readonly double _maneuverGate;
    private readonly double _maneuverGain;

    /// <param name="processNoise">q, the acceleration noise spectral density, kg²/s³.</param>
    /// <param name="initialRateStdKgPerS">σ of the rate before any data.</param>
    /// <param name="maneuverGate">Normalised innovation squared above which Q is inflated (0 turns it off).</param>
    /// <param name="maneuverGain">Factor Q is multiplied by on a gated step.</param>
    public MassRateFilter(double processNoise, double initialRateStdKgPerS, double maneuverGate = 0, double maneuverGain = 100)
    {
        _q = processNoise;
        _initialRateVar = initialRateStdKgPerS * initialRateStdKgPerS;
        _maneuverGate = maneuverGate;
        _maneuverGain = maneuverGain;
    }

    public bool Initialised { get; private set; }

    public long TimestampMs { get; private set; }

    public double MassKg { get; private set; }

    public double RateKgPerS { get; private set; }

    /// <summary>Covariance P = [[P00, P01], [P01, P11]] (kg², kg²/s, kg²/s²).</summary>
    public double P00 { get; private set; }

    public double P01 { get; private set; }

    public double P11 { get; private set; }

    /// <summary>Normalised innovation squared of the last update.</summary>
    public double LastNis { get; private set; }

    /// <summary>Advances the state to a time (no-op backwards: late samples are fused at the current time).</summary>
    public void Predict(long timestampMs)
    {
        if (!Initialised || timestampMs <= TimestampMs)
        {
            return;
        }

        var dt = (timestampMs - TimestampMs) / 1000.0;
        (MassKg, P00, P01, P11) = Propagate(dt, _q);
        TimestampMs = timestampMs;
    }

    /// <summary>Fuses one measurement of mass with its variance (kg²).</summary>
    public void Update(long timestampMs, double measuredMassKg, double varianceKg2)
    {
        if (!Initialised)
        {
            Reset(timestampMs, measuredMassKg, varianceKg2);
            return;
        }

        if (timestampMs > TimestampMs)
        {
            var dt = (timestampMs - TimestampMs) / 1000.0;
            var mPred = MassKg + (RateKgPerS * dt);
            var (_, p00, p01, p11) = Propagate(dt, _q);
            var y = measuredMassKg - mPred;
            var nis = y * y / (p00 + varianceKg2);
            if (_maneuverGate > 0 && nis > _maneuverGate)
            {
                (_, p00, p01, p11) = Propagate(dt, _q * _maneuverGain);
            }

            MassKg = mPred;
            P00 = p00;
            P01 = p01;
            P11 = p11;
            TimestampMs = timestampMs;
        }

        Correct(measuredMassKg, varianceKg2);
    }

    /// <summary>Mass, rate and covariance predicted to a later time without changing the filter.</summary>
    public (double MassKg, double RateKgPerS, double P00, double P01, double P11) PredictedAt(long timestampMs)
    {
        if (!Initialised || timestampMs <= TimestampMs)
        {
            return (MassKg, RateKgPerS, P00, P01, P11);
        }

        var (m, p00, p01, p11) = Propagate((timestampMs - TimestampMs) / 1000.0, _q);
        return (m, RateKgPerS, p00, p01, p11);
    }

    /// <summary>Starts again from a measurement (after a long gap or a tare).</summary>
    public void Reset(long timestampMs, double massKg, double varianceKg2)
    {
        Initialised = true;
        TimestampMs = timestampMs;
        MassKg = massKg;
        RateKgPerS = 0;
        P00 = varianceKg2;
        P01 = 0;
        P11 = _initialRateVar;
        LastNis = 0;
    }

    /// <summary>Moves the mass by a known step (a tare changes the reference, not the contents' rate).</summary>
    public void Shift(double deltaKg) => MassKg += deltaKg;

    private (double M, double P00, double P01, double P11) Propagate(double dt, double q)
    {
        // P' = F P Fᵀ + Q
        var dt2 = dt * dt;
        var p00 = P00 + (2 * dt * P01) + (dt2 * P11) + (q * dt2 * dt / 3.0);
        var p01 = P01 + (dt * P11) + (q * dt2 / 2.0);
        var p11 = P11 + (q * dt);
        return (MassKg + (RateKgPerS * dt), p00, p01, p11);
    }

    private void Correct(double z, double r)
    {
        // H = [1, 0]: S = P00 + R, K = [P00, P01]/S, Joseph-free form is stable here because S ≥ R > 0.
        var s = P00 + r;
        var y = z - MassKg;
        LastNis = y * y / s;
        var k0 = P00 / s;
        var k1 = P01 / s;
        MassKg += k0 * y;
        RateKgPerS += k1 * y;
        var p00 = (1 - k0) * P00;
        var p01 = (1 - k0) * P01;
        var p11 = P11 - (k1 * P01);
        P00 = p00;
        P01 = p01;
        P11 = p11;
    }
}
