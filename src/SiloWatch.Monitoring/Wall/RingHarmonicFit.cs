using MathNet.Numerics.LinearAlgebra;

namespace SiloWatch.Monitoring.Wall;

/// <summary>One circumferential harmonic of a ring: v(θ) ⊃ a·cos nθ + b·sin nθ.</summary>
/// <param name="Order">n (0 = the mean).</param>
/// <param name="Amplitude">A_n = √(a² + b²); for n = 0 the signed mean A0.</param>
/// <param name="DirectionDeg">φ_n = atan2(b, a)/n in degrees from the reference mark, 0..360 (one of the n maxima); 0 for n = 0.</param>
public readonly record struct Harmonic(int Order, double Cos, double Sin, double Amplitude, double DirectionDeg)
{
    /// <summary>A_n and φ_n from a_n, b_n [D, DOMAIN.md §4].</summary>
    public static Harmonic FromCoefficients(int order, double a, double b)
    {
        if (order == 0)
        {
            return new Harmonic(0, a, 0, a, 0);
        }

        var phase = Math.Atan2(b, a) / order * 180.0 / Math.PI;
        return new Harmonic(order, a, b, Math.Sqrt((a * a) + (b * b)), NormaliseDeg(phase));
    }

    public static double NormaliseDeg(double deg)
    {
        var d = deg % 360.0;
        return d < 0 ? d + 360.0 : d;
    }
}

/// <summary>
/// Least-squares harmonic decomposition of one gauge ring, v(θ) = c0 + Σ_{n=1..m} (a_n cos nθ + b_n sin nθ),
/// on the gauges that are good at the moment. The design matrix of each set of good gauges is factorised
/// once (MathNet QR; the pseudo-inverse is cached per set), so a fit is a small matrix-vector product
/// with no allocation. Works with a failed gauge and unequal spacing; refuses orders the remaining
/// gauges cannot resolve: N ≥ 2m + 1 and a condition number of the design matrix at most the limit
/// [D: DOMAIN.md §4; equal spacing reduces to the DFT sums a_n = (2/N)Σ v cos nθ].
/// </summary>
public sealed class RingHarmonicFit
{
    private readonly double[] _anglesRad;
    private readonly Dictionary<ulong, Design> _designs = [];

    /// <param name="anglesDeg">Gauge angles from the reference mark (clockwise seen from above), degrees; at most 64 gauges.</param>
    /// <param name="maxOrder">Highest harmonic wanted, n_max ≥ 0.</param>
    /// <param name="maxConditionNumber">Largest 2-norm condition number of the design matrix accepted for an order.</param>
    public RingHarmonicFit(IReadOnlyList<double> anglesDeg, int maxOrder, double maxConditionNumber = 20)
    {
        ArgumentNullException.ThrowIfNull(anglesDeg);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(anglesDeg.Count, 64, nameof(anglesDeg));
        ArgumentOutOfRangeException.ThrowIfNegative(maxOrder);
        _anglesRad = [.. anglesDeg.Select(d => d * Math.PI / 180.0)];
        MaxOrder = maxOrder;
        MaxConditionNumber = maxConditionNumber;
    }

    public int GaugeCount => _anglesRad.Length;

    public int MaxOrder { get; }

    public double MaxConditionNumber { get; }

    /// <summary>Mask with every gauge good.</summary>
    public ulong AllGauges => _anglesRad.Length == 64 ? ulong.MaxValue : (1UL << _anglesRad.Length) - 1;

    /// <summary>Highest order the given set of good gauges resolves (−1 when none is good).</summary>
    public int ResolvedOrder(ulong goodMask) => DesignFor(goodMask).Order;

    /// <summary>Condition number of the design matrix used for the set (NaN when no gauge is good).</summary>
    public double ConditionNumber(ulong goodMask) => DesignFor(goodMask).Condition;

    /// <summary>
    /// Fits the good gauges' values (indexed by gauge, bad ones ignored). Writes c0, a1, b1, … a_m, b_m into
    /// <paramref name="coefficients"/> (length ≥ 2·MaxOrder + 1; orders above the resolved one set to NaN).
    /// Returns the resolved order m (−1 when no gauge is good).
    /// </summary>
    public int Fit(ReadOnlySpan<double> values, ulong goodMask, Span<double> coefficients)
    {
        if (values.Length < _anglesRad.Length)
        {
            throw new ArgumentException($"need a value for each of the {_anglesRad.Length} gauges", nameof(values));
        }

        if (coefficients.Length < (2 * MaxOrder) + 1)
        {
            throw new ArgumentException($"need room for {(2 * MaxOrder) + 1} coefficients", nameof(coefficients));
        }

        var design = DesignFor(goodMask);
        coefficients.Fill(double.NaN);
        if (design.Order < 0)
        {
            return -1;
        }

        var p = design.PseudoInverse;
        var rows = (2 * design.Order) + 1;
        var cols = design.Gauges.Length;
        for (var r = 0; r < rows; r++)
        {
            var sum = 0.0;
            for (var c = 0; c < cols; c++)
            {
                sum += p[(r * cols) + c] * values[design.Gauges[c]];
            }

            coefficients[r] = sum;
        }

        return design.Order;
    }

    /// <summary>The harmonics of a fit (order 0..resolved), for reporting.</summary>
    public static Harmonic[] Harmonics(ReadOnlySpan<double> coefficients, int resolvedOrder)
    {
        if (resolvedOrder < 0)
        {
            return [];
        }

        var result = new Harmonic[resolvedOrder + 1];
        result[0] = Harmonic.FromCoefficients(0, coefficients[0], 0);
        for (var n = 1; n <= resolvedOrder; n++)
        {
            result[n] = Harmonic.FromCoefficients(n, coefficients[(2 * n) - 1], coefficients[2 * n]);
        }

        return result;
    }

    private Design DesignFor(ulong goodMask)
    {
        goodMask &= AllGauges;
        if (_designs.TryGetValue(goodMask, out var cached))
        {
            return cached;
        }

        var gauges = Enumerable.Range(0, _anglesRad.Length).Where(i => (goodMask & (1UL << i)) != 0).ToArray();
        var design = Build(gauges);
        _designs[goodMask] = design;
        return design;
    }

    private Design Build(int[] gauges)
    {
        var n = gauges.Length;
        if (n == 0)
        {
            return new Design(-1, gauges, [], double.NaN);
        }

        // Highest order first: N ≥ 2m + 1 and a well-conditioned basis, else one order less.
        for (var m = Math.Min(MaxOrder, (n - 1) / 2); m >= 0; m--)
        {
            var x = Matrix<double>.Build.Dense(n, (2 * m) + 1, (i, j) =>
            {
                if (j == 0)
                {
                    return 1.0;
                }

                var order = (j + 1) / 2;
                var angle = order * _anglesRad[gauges[i]];
                return j % 2 == 1 ? Math.Cos(angle) : Math.Sin(angle);
            });
            var condition = m == 0 ? 1.0 : x.ConditionNumber();
            if (!(condition <= MaxConditionNumber))
            {
                continue;
            }

            // X⁺ = R⁻¹Qᵀ from the thin QR: least-squares solve against the identity.
            var pinv = x.QR().Solve(Matrix<double>.Build.DenseIdentity(n));
            var flat = new double[pinv.RowCount * pinv.ColumnCount];
            for (var r = 0; r < pinv.RowCount; r++)
            {
                for (var c = 0; c < pinv.ColumnCount; c++)
                {
                    flat[(r * n) + c] = pinv[r, c];
                }
            }

            return new Design(m, gauges, flat, condition);
        }

        return new Design(-1, gauges, [], double.NaN);
    }

    private sealed record Design(int Order, int[] Gauges, double[] PseudoInverse, double Condition);
}
