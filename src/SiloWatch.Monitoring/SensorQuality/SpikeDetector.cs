namespace SiloWatch.Monitoring;

/// <summary>
/// Robust z-score of each new value against the median and MAD of the previous few values
/// (Hampel-type filter; 1.4826·MAD estimates σ for Gaussian noise [M: Iglewicz &amp; Hoaglin 1993, from memory]).
/// Fixed buffers, no allocation per value. The window is also kept sorted (one value out, one in),
/// so the median is read off and the MAD found by merging the deviations on either side of it,
/// instead of sorting the window twice for every value.
/// </summary>
public sealed class SpikeDetector
{
    private const double MadToSigma = 1.4826;
    private const double LongAlpha = 0.01;
    private readonly double[] _window;
    private readonly double[] _sorted;
    private readonly double _threshold;
    private readonly double _sigmaFloor;
    private int _count;
    private int _next;
    private double _longVar = double.NaN;

    /// <param name="windowSize">Values the median and MAD are taken over (at least 5).</param>
    /// <param name="threshold">Robust z above which a value is a spike.</param>
    /// <param name="sigmaFloor">Smallest σ assumed, in the value's unit, so a quantised or very quiet signal does not flag its last digit.</param>
    public SpikeDetector(int windowSize, double threshold, double sigmaFloor)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(windowSize, 5);
        _window = new double[windowSize];
        _sorted = new double[windowSize];
        _threshold = threshold;
        _sigmaFloor = sigmaFloor;
    }

    /// <summary>Robust z of the last value tested (0 until the window has filled to half).</summary>
    public double LastZ { get; private set; }

    /// <summary>Tests a value against the window, then adds it (spikes too, so that a true step is accepted once it persists).</summary>
    public bool IsSpike(double value)
    {
        var spike = false;
        LastZ = 0;
        if (_count >= Math.Max(5, _window.Length / 2))
        {
            var s = _sorted.AsSpan(0, _count);
            var median = Median(s);
            // A MAD over a short window is itself noisy (now and then half the true σ), so the scale is also
            // floored at a slow estimate of the spread about the median; spikes are kept out of that estimate.
            var madSigma = MadToSigma * MedianDeviation(s, median);
            var sigma = Math.Max(Math.Max(madSigma, _sigmaFloor), double.IsNaN(_longVar) ? 0 : 0.8 * Math.Sqrt(_longVar));
            var deviation = value - median;
            LastZ = Math.Abs(deviation) / sigma;
            spike = LastZ > _threshold;
            if (!spike)
            {
                var d2 = deviation * deviation;
                _longVar = double.IsNaN(_longVar) ? madSigma * madSigma : _longVar + (LongAlpha * (d2 - _longVar));
            }
        }

        if (_count == _window.Length)
        {
            RemoveSorted(_window[_next]);
        }

        InsertSorted(value);
        _window[_next] = value;
        _next = (_next + 1) % _window.Length;

        return spike;
    }

    public void Reset()
    {
        _count = 0;
        _next = 0;
        LastZ = 0;
        _longVar = double.NaN;
    }

    private void RemoveSorted(double value)
    {
        var s = _sorted.AsSpan(0, _count);
        var at = s.BinarySearch(value);
        s[(at + 1)..].CopyTo(s[at..]);
        _count--;
    }

    private void InsertSorted(double value)
    {
        var s = _sorted.AsSpan(0, _count + 1);
        var at = s[..^1].BinarySearch(value);
        at = at < 0 ? ~at : at;
        s[at..^1].CopyTo(s[(at + 1)..]);
        s[at] = value;
        _count++;
    }

    /// <summary>
    /// Median of |x − median| over a sorted window: the deviations below the median, read downwards,
    /// and those above it, read upwards, are each ascending, so a merge of the two finds the middle ones.
    /// </summary>
    private static double MedianDeviation(ReadOnlySpan<double> sorted, double median)
    {
        var n = sorted.Length;
        var upper = n / 2; // index of the (upper) middle deviation in ascending order
        var right = 0;
        while (right < n && sorted[right] < median)
        {
            right++;
        }

        var left = right - 1;
        double previous = 0, current = 0;
        for (var k = 0; k <= upper; k++)
        {
            previous = current;
            if (left >= 0 && (right >= n || median - sorted[left] <= sorted[right] - median))
            {
                current = median - sorted[left--];
            }
            else
            {
                current = sorted[right++] - median;
            }
        }

        return n % 2 == 1 ? current : 0.5 * (previous + current);
    }

    private static double Median(ReadOnlySpan<double> sorted) =>
        sorted.Length % 2 == 1 ? sorted[sorted.Length / 2] : 0.5 * (sorted[(sorted.Length / 2) - 1] + sorted[sorted.Length / 2]);
}
