namespace SiloWatch.Simulator.Model;

/// <summary>Seeded random numbers: the only source of chance in a run, so a seed fixes the output.</summary>
public sealed class Noise(int seed)
{
    private readonly Random _random = new(seed);

    /// <summary>Derives a stream seed from a run seed and a stream number (stable across runs).</summary>
    public static int Derive(int seed, int stream) => unchecked((seed * 486187739) + (stream * 7919) + 12345);

    public double Uniform() => _random.NextDouble();

    /// <summary>Standard normal by Box–Muller.</summary>
    public double Gaussian()
    {
        var u1 = 1.0 - _random.NextDouble();
        var u2 = _random.NextDouble();
        return Math.Sqrt(-2.0 * Math.Log(u1)) * Math.Cos(2 * Math.PI * u2);
    }

    public bool Chance(double probability) => probability > 0 && _random.NextDouble() < probability;
}
