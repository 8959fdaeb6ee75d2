namespace SiloWatch.Simulator.Physics;

/// <summary>Right-hand side of y' = f(x, y), written into <paramref name="dydx"/>.</summary>
public delegate void Derivative(double x, ReadOnlySpan<double> y, Span<double> dydx);

/// <summary>
/// Classical fourth-order Runge–Kutta on a uniform grid for a small state vector, written out so
/// that the simulator's loads come from its own integration rather than from closed forms.
/// </summary>
public static class Rk4
{
    /// <summary>
    /// Integrates y' = f(x, y) from x0 to x1 in <paramref name="steps"/> equal steps; returns the state at
    /// every grid point as one row-major array ((steps + 1) × n). x1 may be below x0 (integration downward).
    /// </summary>
    public static double[] Integrate(Derivative f, ReadOnlySpan<double> y0, double x0, double x1, int steps)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(steps, 1);
        var n = y0.Length;
        if (n > 8)
        {
            throw new ArgumentOutOfRangeException(nameof(y0), n, "at most 8 states");
        }

        var h = (x1 - x0) / steps;
        var rows = new double[(steps + 1) * n];
        y0.CopyTo(rows);
        Span<double> y = stackalloc double[n];
        Span<double> tmp = stackalloc double[n];
        Span<double> k1 = stackalloc double[n];
        Span<double> k2 = stackalloc double[n];
        Span<double> k3 = stackalloc double[n];
        Span<double> k4 = stackalloc double[n];
        y0.CopyTo(y);
        for (var i = 0; i < steps; i++)
        {
            var x = x0 + (i * h);
            f(x, y, k1);
            for (var j = 0; j < n; j++)
            {
                tmp[j] = y[j] + (h / 2 * k1[j]);
            }

            f(x + (h / 2), tmp, k2);
            for (var j = 0; j < n; j++)
            {
                tmp[j] = y[j] + (h / 2 * k2[j]);
            }

            f(x + (h / 2), tmp, k3);
            for (var j = 0; j < n; j++)
            {
                tmp[j] = y[j] + (h * k3[j]);
            }

            f(x + h, tmp, k4);
            for (var j = 0; j < n; j++)
            {
                y[j] += h / 6 * (k1[j] + (2 * k2[j]) + (2 * k3[j]) + k4[j]);
            }

            y.CopyTo(rows.AsSpan((i + 1) * n, n));
        }

        return rows;
    }
}
