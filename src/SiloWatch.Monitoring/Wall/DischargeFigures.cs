using System.Globalization;

namespace SiloWatch.Monitoring.Wall;

/// <summary>
/// The headline figures of a discharge (mass out, mean and peak outflow) as the inventory gives them,
/// checked against what a flow out of the silo can do before they are reported.
/// </summary>
/// <param name="MassOutKg">Mass out, kg; 0 when not known (see <see cref="Known"/>).</param>
/// <param name="MeanRateKgPerS">Mean outflow over the discharge, kg/s, positive out; 0 when not known.</param>
/// <param name="PeakRateKgPerS">Highest outflow over the peak-rate window, kg/s; the mean when the peak could not be trusted.</param>
/// <param name="Known">False when the inventory itself did not follow the flow: the figures are then no measurement.</param>
/// <param name="Notes">What was found and done, in words for the record (empty when the figures are plausible).</param>
public sealed record DischargeFigures(double MassOutKg, double MeanRateKgPerS, double PeakRateKgPerS, bool Known, IReadOnlyList<string> Notes)
{
    /// <summary>
    /// Checks the figures: a discharge cannot add contents (mass out below −tolerance), and the mass out over
    /// the peak-rate window cannot exceed the mass out of the whole discharge (peak · window ≤ mass out +
    /// tolerance) [D: the window lies inside the discharge and the flow is out only]. A rise of the inventory
    /// during a discharge leaves mass out and rates unknown; a peak above the whole mass out is replaced by
    /// the mean rate. Each case says why in <see cref="Notes"/>.
    /// </summary>
    /// <param name="massAtStartKg">Inventory at the onset, kg.</param>
    /// <param name="massAtEndKg">Inventory at the end of the flow, kg.</param>
    /// <param name="durationS">Onset to end, s.</param>
    /// <param name="peakRateKgPerS">Highest outflow over a window of <paramref name="windowS"/> from the captured inventory, kg/s; NaN when no window fitted.</param>
    /// <param name="windowS">The peak-rate window, s.</param>
    /// <param name="toleranceKg">How far the inventory may wander by itself over a discharge (its short-term noise and drift), kg.</param>
    public static DischargeFigures Check(double massAtStartKg, double massAtEndKg, double durationS, double peakRateKgPerS, double windowS, double toleranceKg)
    {
        var notes = new List<string>();
        var massOut = massAtStartKg - massAtEndKg;
        if (!double.IsFinite(massOut))
        {
            notes.Add("the inventory had no estimate at the start or the end of the discharge: mass out and rates not known");
            return new DischargeFigures(0, 0, 0, false, notes);
        }

        if (massOut < -toleranceKg)
        {
            notes.Add(string.Create(CultureInfo.InvariantCulture,
                $"the inventory rose by {-massOut:0} kg during the discharge (more than the {toleranceKg:0} kg it may wander by itself): it did not follow the flow, so mass out and rates are not known; check the weighing of this silo"));
            return new DischargeFigures(0, 0, 0, false, notes);
        }

        massOut = Math.Max(0, massOut);
        var mean = durationS > 0 ? massOut / durationS : 0;
        var peak = peakRateKgPerS;
        if (!double.IsFinite(peak))
        {
            notes.Add("the flow was shorter than the peak-rate window: the peak rate is the mean rate");
            peak = mean;
        }
        else if (peak < 0 || (peak * Math.Min(windowS, durationS)) > massOut + toleranceKg)
        {
            notes.Add(string.Create(CultureInfo.InvariantCulture,
                $"the inventory moved {peak * 3.6:0} t/h over {windowS:0} s, more than the discharge's whole mass out allows: a step of the estimate, not the flow; the peak rate is the mean rate"));
            peak = mean;
        }

        return new DischargeFigures(massOut, mean, Math.Max(peak, mean), true, notes);
    }
}
