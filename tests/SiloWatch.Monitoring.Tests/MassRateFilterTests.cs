using MathNet.Numerics.LinearAlgebra;

namespace SiloWatch.Monitoring.Tests;

public sealed class MassRateFilterTests
{
    [Fact]
    public void WithoutProcessNoiseTheFilterEqualsTheBatchLeastSquaresLine()
    {
        // Reference: weighted least squares of m(t) = m_N + r·(t − t_N) over all measurements,
        // solved with MathNet (QR). A Kalman filter with q = 0 and a diffuse rate prior is that
        // batch solution computed recursively [M: textbook equivalence, e.g. Simon, Optimal State Estimation].
        var random = new Random(7);
        const int n = 200;
        const double sigma = 25.0;
        var filter = new MassRateFilter(processNoise: 0, initialRateStdKgPerS: 1e6);
        var times = new double[n];
        var z = new double[n];
        for (var i = 0; i < n; i++)
        {
            times[i] = i * 1.0;
            z[i] = 120_000 - (3.5 * times[i]) + (sigma * Gaussian(random));
            filter.Update((long)(times[i] * 1000), z[i], sigma * sigma);
        }

        var tN = times[^1];
        var x = Matrix<double>.Build.Dense(n, 2, (i, j) => j == 0 ? 1.0 : times[i] - tN);
        var y = Vector<double>.Build.DenseOfArray(z);
        var beta = x.QR().Solve(y);
        var cov = (x.TransposeThisAndMultiply(x)).Inverse() * (sigma * sigma);

        Assert.Equal(beta[0], filter.MassKg, 1e-3 * sigma);
        Assert.Equal(beta[1], filter.RateKgPerS, 1e-5);
        Assert.Equal(cov[0, 0], filter.P00, cov[0, 0] * 1e-3);
        Assert.Equal(cov[1, 1], filter.P11, cov[1, 1] * 1e-3);
        Assert.Equal(cov[0, 1], filter.P01, Math.Abs(cov[0, 1]) * 1e-3);
    }

    [Fact]
    public void TheUnrolledPredictionMatchesTheMatrixForm()
    {
        // P' = F·P·Fᵀ + Q with F = [[1, dt], [0, 1]], Q = q·[[dt³/3, dt²/2], [dt²/2, dt]] (MathNet as the reference).
        const double q = 2.5, dt = 1.7;
        var filter = new MassRateFilter(q, initialRateStdKgPerS: 4);
        filter.Update(0, 1000, 100);
        filter.Update(1000, 1010, 100);
        var p = Matrix<double>.Build.DenseOfArray(new[,] { { filter.P00, filter.P01 }, { filter.P01, filter.P11 } });
        var f = Matrix<double>.Build.DenseOfArray(new[,] { { 1, dt }, { 0, 1.0 } });
        var qm = Matrix<double>.Build.DenseOfArray(new[,] { { dt * dt * dt / 3, dt * dt / 2 }, { dt * dt / 2, dt } }) * q;
        var expected = (f * p * f.Transpose()) + qm;
        var m = filter.MassKg + (filter.RateKgPerS * dt);

        var predicted = filter.PredictedAt(1000 + (long)(dt * 1000));

        Assert.Equal(m, predicted.MassKg, 9);
        Assert.Equal(expected[0, 0], predicted.P00, 9);
        Assert.Equal(expected[0, 1], predicted.P01, 9);
        Assert.Equal(expected[1, 1], predicted.P11, 9);
    }

    [Fact]
    public void AStepInRateIsFollowedWithinAFewSamplesWhenTheManeuverGateIsOn()
    {
        var gated = new MassRateFilter(0.5, 20, maneuverGate: 16, maneuverGain: 400);
        var plain = new MassRateFilter(0.5, 20);
        var random = new Random(3);
        for (var i = 0; i < 600; i++)
        {
            // At rest for 5 min, then a discharge at 30 kg/s.
            var truth = i < 300 ? 200_000.0 : 200_000.0 - (30.0 * (i - 300));
            var zi = truth + (20 * Gaussian(random));
            gated.Update(i * 1000L, zi, 400);
            plain.Update(i * 1000L, zi, 400);
            if (i == 330)
            {
                Assert.InRange(gated.RateKgPerS, -36, -24);
                Assert.True(Math.Abs(plain.RateKgPerS + 30) > Math.Abs(gated.RateKgPerS + 30));
            }
        }
    }

    private static double Gaussian(Random r) => Math.Sqrt(-2.0 * Math.Log(1.0 - r.NextDouble())) * Math.Cos(2.0 * Math.PI * r.NextDouble());
}
