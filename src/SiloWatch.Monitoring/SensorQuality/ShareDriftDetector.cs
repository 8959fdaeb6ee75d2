namespace SiloWatch.Monitoring;

/// <summary>
/// Learns how the net load divides between the load cells of one silo and flags a cell whose
/// share leaves that pattern: a drifting or creeping cell moves its own share while the others
/// follow, which a change of fill does not do. A slowly learned pattern (hours) is compared with a
/// short-term smoothed share (tens of seconds). Learning pauses while any cell is flagged or the
/// silo is nearly empty (shares are meaningless on a small net load).
/// <para>
/// It also supplies the share that stands in for a failed cell. A failure is seen only some time
/// after it began (a stuck cell after the stuck window, a cell dead at zero after its share has left
/// the pattern), and the shares of that last stretch are already biased. So the shares of clean scans
/// (no cell drifting or spiking) are smoothed over about a minute and kept as dated snapshots; a
/// substitution takes the newest snapshot from before the failure could have begun, frozen while the
/// cell is out. Its uncertainty grows with the time since, at the rate the pattern was seen to move
/// (a random walk estimated from successive snapshots), up to the spread an off-centre load gives by
/// geometry. With no such snapshot (the cell failed before a clean period was seen) the slowly
/// learned pattern stands in: the shares of the first significant load, or before one equal shares (the
/// geometry of equally loaded supports), with the spread an unknown off-centre load gives.
/// </para>
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
    private bool _seenLoad;

    // Clean-period shares and their dated snapshots (a ring of HistorySlots × cells).
    private const int HistorySlots = 24;
    private readonly double[] _good;
    private readonly double[] _history;
    private readonly long[] _historyMs;
    private int _historyCount;
    private int _historyNext;
    private double _goodSeconds;
    private double _walkVarPerS;
    private bool _walkKnown;
    private readonly double _goodTimeS;
    private readonly double _snapshotS;
    private readonly double _guardS;
    private readonly double _geometryStd;

    // The substitution in force: shares frozen when it began, their σ, the time they stand for.
    private readonly double[] _substitute;
    private readonly double[] _substituteVar;
    private int _substituteMask;
    private long _substituteFromMs;
    private bool _substituteWalks;

    /// <param name="cells">Number of cells compared.</param>
    /// <param name="learnTimeS">Time constant of the learned pattern, s.</param>
    /// <param name="smoothTimeS">Time constant of the recent share, s.</param>
    /// <param name="tolerance">Absolute share departure that flags drift (0.04: four points of share).</param>
    /// <param name="guardS">How long a cell's failure may go unnoticed, s (the stuck window and the drift smoothing): substitutions use shares from before that.</param>
    /// <param name="geometryStd">σ of a share about equal shares by geometry (an unknown off-centre load): the prior and the ceiling of a substitution's σ.</param>
    /// <param name="goodTimeS">Time constant of the clean-period shares, s. Default 60.</param>
    /// <param name="snapshotS">Interval of their snapshots, s. Default 15.</param>
    public ShareDriftDetector(int cells, double learnTimeS, double smoothTimeS, double tolerance, double guardS = 0, double geometryStd = 0.02,
        double goodTimeS = 60, double snapshotS = 15)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(cells, 1);
        ArgumentOutOfRangeException.ThrowIfNegative(guardS);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(geometryStd);
        _learned = new double[cells];
        _learnedVar = new double[cells];
        _recent = new double[cells];
        _good = new double[cells];
        _substitute = new double[cells];
        _substituteVar = new double[cells];
        _history = new double[HistorySlots * cells];
        _historyMs = new long[HistorySlots];
        _learnTimeS = learnTimeS;
        _smoothTimeS = smoothTimeS;
        _tolerance = tolerance;
        _guardS = guardS;
        _geometryStd = geometryStd;
        _goodTimeS = goodTimeS;
        _snapshotS = snapshotS;
        Array.Fill(_learned, 1.0 / cells);
        Array.Fill(_recent, 1.0 / cells);
        Array.Fill(_good, 1.0 / cells);
        // Until learned, allow the spread an off-centre fill gives about equal shares.
        Array.Fill(_learnedVar, geometryStd * geometryStd);
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
    /// <param name="clean">No cell's sample is doubtful (a spike): the scan may teach the clean-period shares.</param>
    public int Update(ReadOnlySpan<double> netForcesKn, long timestampMs, bool significantLoad, bool clean = true)
    {
        _substituteMask = 0;
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

        if (!_seenLoad)
        {
            // The first significant load starts the pattern (an off-centre base or fill is normal, not drift);
            // learning from equal shares would flag such a cell at once and then never learn.
            _seenLoad = true;
            for (var i = 0; i < _learned.Length; i++)
            {
                _learned[i] = _recent[i] = _good[i] = netForcesKn[i] / sum;
            }

            return 0;
        }

        var aRecent = dtS <= 0 ? 1.0 : 1.0 - Math.Exp(-dtS / _smoothTimeS);
        for (var i = 0; i < _learned.Length; i++)
        {
            _recent[i] += aRecent * ((netForcesKn[i] / sum) - _recent[i]);
        }

        mask = DriftMask();
        if (mask == 0 && clean && dtS > 0)
        {
            LearnGood(netForcesKn, sum, dtS, timestampMs);
        }

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
        shares.CopyTo(_good);
        _seenLoad = true;
        _goodSeconds = 0;
        _historyCount = 0;
    }

    /// <summary>
    /// Cells whose load is implausible against the others' right now, to be left out and replaced:
    /// one cell's share jumps more than <paramref name="grossFactor"/> × the tolerance from its
    /// clean-period share while no other moves even two thirds as far (a cell dead at zero, a broken
    /// cable: a change of fill or an off-centre load moves several shares together). Judged on the
    /// instantaneous shares, so a failure is left out before its smoothed share shows drift. A suspect
    /// is cleared when its load agrees with its substituted share again. No allocation.
    /// </summary>
    /// <param name="netForcesKn">Net force of every cell, NaN for a cell not usable.</param>
    /// <param name="suspects">The suspects so far (bit mask).</param>
    public int Suspects(ReadOnlySpan<double> netForcesKn, int suspects, bool significantLoad, double grossFactor)
    {
        if (!significantLoad)
        {
            return suspects;
        }

        double sumAll = 0, sumClear = 0, shareClear = 0;
        var complete = true;
        for (var i = 0; i < _good.Length; i++)
        {
            var f = netForcesKn[i];
            if (double.IsNaN(f))
            {
                complete = false;
                continue;
            }

            sumAll += f;
            if ((suspects & (1 << i)) == 0)
            {
                sumClear += f;
                shareClear += _substituteMask != 0 ? _substitute[i] : Reference(i);
            }
        }

        if (suspects != 0)
        {
            if (sumClear <= 0 || shareClear <= 0)
            {
                return suspects;
            }

            var totalKn = sumClear / shareClear;
            for (var i = 0; i < _good.Length; i++)
            {
                var bit = 1 << i;
                var share = _substituteMask != 0 ? _substitute[i] : Reference(i);
                if ((suspects & bit) != 0 && !double.IsNaN(netForcesKn[i]) && Math.Abs((netForcesKn[i] / totalKn) - share) < _tolerance)
                {
                    suspects &= ~bit;
                }
            }

            return suspects;
        }

        if (!complete || sumAll <= 0)
        {
            return 0;
        }

        double largest = 0, second = 0;
        var cell = -1;
        for (var i = 0; i < _good.Length; i++)
        {
            var d = Math.Abs((netForcesKn[i] / sumAll) - Reference(i));
            if (d > largest)
            {
                second = largest;
                largest = d;
                cell = i;
            }
            else if (d > second)
            {
                second = d;
            }
        }

        return cell >= 0 && largest > grossFactor * _tolerance && largest > 1.5 * second ? 1 << cell : 0;
    }

    // The share a cell is judged against: the clean-period share once settled, else the learned pattern.
    private double Reference(int cell) => _goodSeconds >= 2 * _goodTimeS ? _good[cell] : _learned[cell];

    /// <summary>Cells now being substituted (bit mask; 0 when none).</summary>
    public int SubstitutedMask => _substituteMask;

    /// <summary>
    /// Starts (or keeps) substituting the cells of <paramref name="failedMask"/>: freezes the shares
    /// of the newest clean snapshot older than the guard, else the learned pattern. The recent shares
    /// restart from them, so the good cells are not judged against shares the failure biased.
    /// Returns the drift mask after that. No allocation.
    /// </summary>
    public int BeginSubstitution(int failedMask, long timestampMs)
    {
        if (failedMask == _substituteMask)
        {
            return DriftMask();
        }

        _substituteMask = failedMask;
        var slot = NewestSnapshotBefore(timestampMs - (long)(_guardS * 1000));
        if (slot >= 0)
        {
            // The clean share's own scatter: what moved over one smoothing time at the walk rate, at least a little.
            var baseVar = Math.Max(_walkKnown ? _walkVarPerS * _goodTimeS : 0, 1e-6);
            for (var i = 0; i < _substitute.Length; i++)
            {
                _substitute[i] = _history[(slot * _substitute.Length) + i];
                _substituteVar[i] = baseVar;
            }

            _substituteFromMs = _historyMs[slot];
            _substituteWalks = true;
        }
        else
        {
            for (var i = 0; i < _substitute.Length; i++)
            {
                _substitute[i] = _learned[i];
                _substituteVar[i] = Math.Max(_learnedVar[i], _geometryStd * _geometryStd);
            }

            _substituteFromMs = timestampMs;
            _substituteWalks = false;
        }

        _substitute.CopyTo(_recent, 0);
        return DriftMask();
    }

    /// <summary>The share a cell stands for in the substitution in force (see <see cref="BeginSubstitution"/>).</summary>
    public double SubstituteShare(int cell) => _substitute[cell];

    /// <summary>σ of <see cref="SubstituteShare"/> at a time: grows with the time since the shares were taken, up to the geometric spread.</summary>
    public double SubstituteShareStd(int cell, long timestampMs)
    {
        var v = _substituteVar[cell];
        if (_substituteWalks)
        {
            var elapsedS = Math.Max(0, (timestampMs - _substituteFromMs) / 1000.0);
            // Without a measured walk rate yet, assume the pattern may move by the geometric spread over the learning time.
            var rate = _walkKnown ? _walkVarPerS : _geometryStd * _geometryStd / _learnTimeS;
            v = Math.Min(v + (rate * elapsedS), Math.Max(v, _geometryStd * _geometryStd));
        }

        return Math.Sqrt(v);
    }

    private void LearnGood(ReadOnlySpan<double> netForcesKn, double sum, double dtS, long timestampMs)
    {
        var a = 1.0 - Math.Exp(-dtS / _goodTimeS);
        for (var i = 0; i < _good.Length; i++)
        {
            _good[i] += a * ((netForcesKn[i] / sum) - _good[i]);
        }

        _goodSeconds += dtS;
        if (_goodSeconds < 2 * _goodTimeS)
        {
            return; // still settling from its starting value
        }

        var last = _historyCount == 0 ? -1 : (_historyNext + HistorySlots - 1) % HistorySlots;
        if (last >= 0 && timestampMs - _historyMs[last] < _snapshotS * 1000)
        {
            return;
        }

        if (last >= 0)
        {
            // Random-walk rate of the pattern from successive snapshots: mean squared change per second.
            var gapS = (timestampMs - _historyMs[last]) / 1000.0;
            if (gapS < 10 * _snapshotS)
            {
                var d2 = 0.0;
                for (var i = 0; i < _good.Length; i++)
                {
                    var d = _good[i] - _history[(last * _good.Length) + i];
                    d2 += d * d;
                }

                var perS = d2 / _good.Length / gapS;
                _walkVarPerS = _walkKnown ? _walkVarPerS + (0.1 * (perS - _walkVarPerS)) : perS;
                _walkKnown = true;
            }
        }

        _good.CopyTo(_history.AsSpan(_historyNext * _good.Length, _good.Length));
        _historyMs[_historyNext] = timestampMs;
        _historyNext = (_historyNext + 1) % HistorySlots;
        _historyCount = Math.Min(_historyCount + 1, HistorySlots);
    }

    private int NewestSnapshotBefore(long limitMs)
    {
        for (var j = 1; j <= _historyCount; j++)
        {
            var slot = (_historyNext + HistorySlots - j) % HistorySlots;
            if (_historyMs[slot] <= limitMs)
            {
                return slot;
            }
        }

        return -1;
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
