using MathNet.Numerics.LinearAlgebra;

namespace SiloWatch.Monitoring.Tests;

public sealed class RingFitTests
{
    [Fact]
    public void TheFirstHarmonicFitMatchesMathNetLeastSquaresWithAGaugeMissing()
    {
        // Five of six gauges (one failed), unequal spacing: least squares on [1, cos θ, sin θ] (MathNet QR as reference).
        double[] deg = [0, 60, 120, 240, 300];
        var angles = deg.Select(d => d * Math.PI / 180).ToArray();
        var values = angles.Select((a, i) => -120 + (18 * Math.Cos(a - 0.7)) + (i % 2 == 0 ? 0.8 : -0.5)).ToArray();
        var x = Matrix<double>.Build.Dense(angles.Length, 3, (i, j) => j == 0 ? 1 : j == 1 ? Math.Cos(angles[i]) : Math.Sin(angles[i]));
        var beta = x.QR().Solve(Vector<double>.Build.DenseOfArray(values));

        Assert.True(RingFit.TryFit(angles, values, out var c0, out var a1, out var b1));
        Assert.Equal(beta[0], c0, 9);
        Assert.Equal(beta[1], a1, 9);
        Assert.Equal(beta[2], b1, 9);
    }

    [Fact]
    public void TwoGaugesCannotDetermineAFirstHarmonic()
    {
        Assert.False(RingFit.TryFit([0.0, Math.PI], [1.0, 2.0], out _, out _, out _));
    }
}
