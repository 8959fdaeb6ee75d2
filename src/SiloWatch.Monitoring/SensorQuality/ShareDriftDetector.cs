namespace SiloWatch.Monitoring;

/// <summary>
/// Learns how the net load divides between the load cells of one silo and flags a cell whose
/// share leaves that pattern: a drifting or creeping cell moves its own share while the others
/// follow, which a change of fill does not do. A slowly learned pattern (hours) is compared with a
/// short-term smoothed share (tens of seconds). Learning pauses while any cell is flagged or the
/// silo is nearly empty (shares are meaningless on a small net load).
/// </summary>
public sealed class ShareDriftDetector
{
    private readonly double[] _learned;
    private readonly double[] _learnedVar;
    private readonly double[] _recent;
    private readonly double _learnTimeS;
    private readonly double _smoothTimeS;
    private readonly double _tolerance;
    private long _lastMs = long.MinValue;

    /// <param name="cells">Number of cells compared.</param>
    /// <param name="learnTimeS">Time constant of the learned pattern, s.</param>
    /// <param name="smoothTimeS">Time constant of the recent share, s.</param>
    /// <param name="tolerance">Absolute share departure that flags drift (0.04: four points of share).</param>
    public ShareDriftDetector(int cells, double learnTimeS, double smoothTimeS, double tolerance)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(cells, 1);
        _learned = new double[cells];
        _learnedVar = new double[cells];
        _recent = new double[cells];
        _learnTimeS = learnTimeS;
        _smoothTimeS = smoothTimeS;
        _tolerance = tolerance;
        Array.Fill(_learned, 1.0 / cells);
        Array.Fill(_recent, 1.0 / cells);
        // Until learned, allow a modest spread about equal shares (off-centre fills, uneven bases).
        Array.Fill(_learnedVar, 0.02 * 0.02);
    }

    public int Count => _learned.Length;

    /// <summary>Expected share of a cell (learned).</summary>
    public double ExpectedShare(int cell) => _learned[cell];

    /// <summary>Standard deviation of the share about its learned value.</summary>
    public double ShareStd(int cell) => Math.Sqrt(_learnedVar[cell]);

    public double RecentShare(int cell) => _recent[cell];

    /// <summary>Departure of the recent share from the learned one.</summary>
    public double Departure(int cell) => _recent[cell] - _learned[cell];

    public bool IsDrifting(int cell) => Math.Abs(_recent[cell] - _learned[cell]) > _tolerance;

    /// <summary>Feeds one scan of net forces (all cells good); returns a bit mask of drifting cells.</summary>
    public int Update(ReadOnlySpan<double> netForcesKn, long timestampMs, bool significantLoad)
    {
        var dtS = _lastMs == long.MinValue ? 0.0 : Math.Max(0.0, (timestampMs - _lastMs) / 1000.0);
        _lastMs = timestampMs;
        var sum = 0.0;
        foreach (var f in netForcesKn)
        {
            sum += f;
        }

        var mask = 0;
        if (!significantLoad || sum <= 0)
        {
            return DriftMask();
        }

        var aRecent = dtS <= 0 ? 1.0 : 1.0 - Math.Exp(-dtS / _smoothTimeS);
        for (var i = 0; i < _learned.Length; i++)
        {
            _recent[i] += aRecent * ((netForcesKn[i] / sum) - _recent[i]);
        }

        mask = DriftMask();
        if (mask == 0 && dtS > 0)
        {
            var aLearn = 1.0 - Math.Exp(-dtS / _learnTimeS);
            for (var i = 0; i < _learned.Length; i++)
            {
                var d = _recent[i] - _learned[i];
                _learned[i] += aLearn * d;
                _learnedVar[i] += aLearn * ((d * d) - _learnedVar[i]);
            }
        }

        return mask;
    }

    /// <summary>Sets the pattern directly (from a snapshot or a confirmed calibration).</summary>
    public void SetPattern(ReadOnlySpan<double> shares)
    {
        shares.CopyTo(_learned);
        shares.CopyTo(_recent);
    }

    public double[] Pattern() => (double[])_learned.Clone();

    private int DriftMask()
    {
        var mask = 0;
        for (var i = 0; i < _learned.Length; i++)
        {
            if (IsDrifting(i))
            {
                mask |= 1 << i;
            }
        }

        return mask;
    }
}
