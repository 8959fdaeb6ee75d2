namespace SiloWatch.Simulator.Physics;

/// <summary>
/// Classical fourth-order Runge–Kutta on a uniform grid for a small state vector, written out so
/// that the simulator's loads come from its own integration rather than from closed forms.
/// </summary>
public static class Rk4
{
    /// <summary>
    /// Integrates y' = f(x, y) from x0 to x1 in <paramref name="steps"/> equal steps; returns the state
    /// at every grid point (steps + 1 rows). x1 may be below x0 (integration downward).
    /// </summary>
    public static double[][] Integrate(Func<double, double[], double[]> f, double[] y0, double x0, double x1, int steps)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(steps, 1);
        var h = (x1 - x0) / steps;
        var n = y0.Length;
        var rows = new double[steps + 1][];
        rows[0] = (double[])y0.Clone();
        var y = (double[])y0.Clone();
        var tmp = new double[n];
        for (var i = 0; i < steps; i++)
        {
            var x = x0 + (i * h);
            var k1 = f(x, y);
            for (var j = 0; j < n; j++)
            {
                tmp[j] = y[j] + (h / 2 * k1[j]);
            }

            var k2 = f(x + (h / 2), tmp);
            for (var j = 0; j < n; j++)
            {
                tmp[j] = y[j] + (h / 2 * k2[j]);
            }

            var k3 = f(x + (h / 2), tmp);
            for (var j = 0; j < n; j++)
            {
                tmp[j] = y[j] + (h * k3[j]);
            }

            var k4 = f(x + h, tmp);
            for (var j = 0; j < n; j++)
            {
                y[j] += h / 6 * (k1[j] + (2 * k2[j]) + (2 * k3[j]) + k4[j]);
            }

            rows[i + 1] = (double[])y.Clone();
        }

        return rows;
    }
}
