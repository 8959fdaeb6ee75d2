namespace SiloWatch.Monitoring.Wall;

/// <summary>
/// Residual apparent strain per K of one gauge, learned while the silo is idle (contents unchanged, so a
/// strain that follows the gauge's temperature is thermal): exponentially weighted regression slope
/// k = cov(T, ε)/var(T), shrunk toward a prior by a pseudo-variance [D: ordinary least squares slope with
/// a conjugate prior]. Plain arithmetic, no allocation.
/// </summary>
public sealed class ThermalSensitivity(double priorMicroPerK, double priorVarianceK2, double timeConstantS, double maxAbsMicroPerK)
{
    private double _meanT;
    private double _meanE;
    private double _varT;
    private double _covTE;
    private long _lastMs = long.MinValue;
    private bool _reanchor;

    /// <summary>Weighted temperature variance seen so far, K².</summary>
    public double VarianceK2 => _varT;

    /// <summary>The slope, microstrain/K: the prior until enough temperature variation has been seen.</summary>
    public double MicroPerK
    {
        get
        {
            var k = (_covTE + (priorMicroPerK * priorVarianceK2)) / (_varT + priorVarianceK2);
            return Math.Clamp(double.IsFinite(k) ? k : priorMicroPerK, -maxAbsMicroPerK, maxAbsMicroPerK);
        }
    }

    /// <summary>Adds one idle observation (strain microstrain, temperature degC).</summary>
    public void Observe(long tsMs, double strainMicro, double temperatureC)
    {
        if (!double.IsFinite(strainMicro) || !double.IsFinite(temperatureC))
        {
            return;
        }

        if (_lastMs == long.MinValue || _reanchor)
        {
            _reanchor = false;
            _meanT = temperatureC;
            _meanE = strainMicro;
            _lastMs = tsMs;
            return;
        }

        var dt = Math.Max(0, (tsMs - _lastMs) / 1000.0);
        _lastMs = tsMs;

        // Exponentially weighted mean, variance and covariance (West's incremental form).
        var a = 1 - Math.Exp(-dt / timeConstantS);
        var dT = temperatureC - _meanT;
        var dE = strainMicro - _meanE;
        _meanT += a * dT;
        _meanE += a * dE;
        _varT = (1 - a) * (_varT + (a * dT * dT));
        _covTE = (1 - a) * (_covTE + (a * dT * dE));
    }

    /// <summary>
    /// Ends an idle segment: the contents change before the next one, so the next observation re-anchors the
    /// means (the slope learned so far is kept; a strain step from a fill or discharge is not read as thermal).
    /// </summary>
    public void Break() => _reanchor = true;

    /// <summary>Restores a learned value as if seen with the given variance.</summary>
    public void Restore(double microPerK, double varianceK2)
    {
        _varT = varianceK2;
        _covTE = microPerK * varianceK2;
    }
}
