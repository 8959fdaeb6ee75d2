namespace SiloWatch.Monitoring.Tests;

/// <summary>
/// The spike filter keeps its window sorted instead of sorting it for every value; its robust z must
/// be exactly that of the plain definition (median and MAD of the previous values, each by a full sort).
/// </summary>
public sealed class SpikeDetectorTests
{
    [Theory]
    [InlineData(5, 1)]
    [InlineData(8, 2)]
    [InlineData(21, 3)]
    [InlineData(30, 4)]
    public void RobustZMatchesMedianAndMadTakenBySorting(int window, int seed)
    {
        var random = new Random(seed);
        var detector = new SpikeDetector(window, 4.0, 1e-6);
        var reference = new SortingReference(window, 4.0, 1e-6);
        var level = 1.0;
        var spikes = 0;
        for (var i = 0; i < 5000; i++)
        {
            // Noise, repeated (quantised) values, occasional steps and spikes.
            level += random.NextDouble() < 0.002 ? (random.NextDouble() - 0.5) * 2 : 0;
            var value = Math.Round(level + (0.001 * (random.NextDouble() - 0.5)), random.NextDouble() < 0.3 ? 3 : 6);
            if (random.NextDouble() < 0.01)
            {
                value += 0.5;
            }

            var expected = reference.IsSpike(value);
            Assert.Equal(expected, detector.IsSpike(value));
            Assert.Equal(reference.LastZ, detector.LastZ, 12);
            spikes += expected ? 1 : 0;
        }

        Assert.InRange(spikes, 10, 200); // the injected spikes (1 %) are found, noise is not flagged
    }

    [Fact]
    public void ResetEmptiesTheSortedWindowToo()
    {
        var detector = new SpikeDetector(7, 4.0, 1e-6);
        for (var i = 0; i < 20; i++)
        {
            detector.IsSpike(100 + (i % 3 * 0.01));
        }

        detector.Reset();
        var reference = new SortingReference(7, 4.0, 1e-6);
        foreach (var v in new[] { 1.0, 1.01, 0.99, 1.0, 1.02, 0.98, 1.0, 5.0, 1.0 })
        {
            Assert.Equal(reference.IsSpike(v), detector.IsSpike(v));
            Assert.Equal(reference.LastZ, detector.LastZ, 12);
        }
    }

    /// <summary>The definition written plainly: copy the window, sort, take the median; sort the deviations, take their median.</summary>
    private sealed class SortingReference(int window, double threshold, double sigmaFloor)
    {
        private readonly Queue<double> _values = new();
        private double _longVar = double.NaN;

        public double LastZ { get; private set; }

        public bool IsSpike(double value)
        {
            var spike = false;
            LastZ = 0;
            if (_values.Count >= Math.Max(5, window / 2))
            {
                var sorted = _values.Order().ToArray();
                var median = Median(sorted);
                var mad = 1.4826 * Median([.. sorted.Select(v => Math.Abs(v - median)).Order()]);
                var sigma = Math.Max(Math.Max(mad, sigmaFloor), double.IsNaN(_longVar) ? 0 : 0.8 * Math.Sqrt(_longVar));
                var deviation = value - median;
                LastZ = Math.Abs(deviation) / sigma;
                spike = LastZ > threshold;
                if (!spike)
                {
                    _longVar = double.IsNaN(_longVar) ? mad * mad : _longVar + (0.01 * ((deviation * deviation) - _longVar));
                }
            }

            _values.Enqueue(value);
            if (_values.Count > window)
            {
                _values.Dequeue();
            }

            return spike;
        }

        private static double Median(double[] s) => s.Length % 2 == 1 ? s[s.Length / 2] : 0.5 * (s[(s.Length / 2) - 1] + s[s.Length / 2]);
    }
}
