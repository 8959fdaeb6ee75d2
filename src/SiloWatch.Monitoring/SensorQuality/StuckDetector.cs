namespace SiloWatch.Monitoring;

/// <summary>
/// Flags a signal whose value has not moved by more than a tolerance for a whole window: a live
/// bridge on a 24-bit converter always shows noise in its last digits, a frozen one does not.
/// O(1): tracks the start of the current constant run.
/// </summary>
public struct StuckDetector(long windowMs, double tolerance)
{
    private long _runStartMs = long.MinValue;
    private double _runValue;

    public readonly long WindowMs => windowMs;

    public bool Update(double value, long timestampMs)
    {
        if (_runStartMs == long.MinValue || Math.Abs(value - _runValue) > tolerance)
        {
            _runStartMs = timestampMs;
            _runValue = value;
            return false;
        }

        return timestampMs - _runStartMs >= windowMs;
    }

    public void Reset() => _runStartMs = long.MinValue;
}
