namespace SiloWatch.Monitoring;

/// <summary>
/// Error arithmetic of a weighing system of several load cells, after the way OIML R60 / R76
/// apportion the instrument's error [M: from memory of OIML R60 (load cells) and R76-1
/// (non-automatic weighing instruments); verify against the current editions].
/// </summary>
public static class LoadCellErrorBudget
{
    /// <summary>Usual apportioning factor of the load cells in a weighing instrument's error, p_LC [M: OIML R60].</summary>
    public const double TypicalLoadCellFactor = 0.7;

    /// <summary>
    /// Maximum permissible error of a class III instrument on initial verification, in verification
    /// intervals e, for a load expressed in e: 0.5 e up to 500 e, 1.0 e up to 2000 e, 1.5 e above
    /// (to 10 000 e) [M: OIML R76-1 Table 6, from memory].
    /// </summary>
    public static double ClassIIIMpeInE(double loadInE)
    {
        var m = Math.Abs(loadInE);
        return m <= 500 ? 0.5 : m <= 2000 ? 1.0 : 1.5;
    }

    /// <summary>A load cell's share of that error: p_LC × mpe, in load cell verification intervals v [M: OIML R60].</summary>
    public static double LoadCellMpeInV(double loadInV, double apportioningFactor = TypicalLoadCellFactor) =>
        apportioningFactor * ClassIIIMpeInE(loadInV);

    /// <summary>The apportioned parts must not exceed the whole: Σ p_i² ≤ 1 [M: OIML R76-1, errors combined in quadrature].</summary>
    public static bool ApportioningIsValid(ReadOnlySpan<double> factors)
    {
        var sum = 0.0;
        foreach (var p in factors)
        {
            sum += p * p;
        }

        return sum <= 1.0 + 1e-12;
    }

    /// <summary>
    /// Smallest verification interval of the instrument that N cells sharing the load allow:
    /// e ≥ v_min·√N (independent cell errors add in quadrature) [M: OIML R76 compatibility check].
    /// </summary>
    public static double MinimumInstrumentIntervalKn(double cellMinimumIntervalKn, int cells) => cellMinimumIntervalKn * Math.Sqrt(cells);

    /// <summary>Standard uncertainty of one cell from its combined error bound (% of rated output), taken as rectangular: bound/√3 [M: GUM 4.3.7].</summary>
    public static double CellStandardUncertaintyKn(double combinedErrorPctRo, double capacityKn) =>
        combinedErrorPctRo / 100.0 * capacityKn / Math.Sqrt(3);

    /// <summary>Standard uncertainty of the sum of independent cells: root sum of squares [D: GUM law of propagation, uncorrelated].</summary>
    public static double SumStandardUncertaintyKn(ReadOnlySpan<double> cellUncertaintiesKn)
    {
        var sum = 0.0;
        foreach (var u in cellUncertaintiesKn)
        {
            sum += u * u;
        }

        return Math.Sqrt(sum);
    }
}
