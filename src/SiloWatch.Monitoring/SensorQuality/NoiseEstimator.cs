namespace SiloWatch.Monitoring;

/// <summary>
/// Sample noise variance from first differences: var(x_k − x_(k−1)) = 2σ² for white noise, and a
/// slow trend (filling, discharge) adds only (slope·dt)². Exponentially weighted, O(1).
/// </summary>
public struct NoiseEstimator(double alpha, double varianceFloor)
{
    private double _last = double.NaN;
    private double _variance = double.NaN;

    /// <summary>Estimated variance of one sample, never below the floor; the floor until enough samples have arrived.</summary>
    public readonly double Variance => double.IsNaN(_variance) ? varianceFloor : Math.Max(_variance, varianceFloor);

    public void Update(double value)
    {
        if (!double.IsNaN(_last))
        {
            var d = value - _last;
            var half = 0.5 * d * d;
            _variance = double.IsNaN(_variance) ? half : _variance + (alpha * (half - _variance));
        }

        _last = value;
    }

    /// <summary>Forgets the previous value (after a gap or a rejected sample) but keeps the variance.</summary>
    public void Break() => _last = double.NaN;
}
