namespace SiloWatch.Monitoring.Tests;

public sealed class LoadCellErrorBudgetTests
{
    // OIML R60 / R76 apportioning, from memory (not checked against the current editions):
    // class III mpe 0.5 e / 1.0 e / 1.5 e at ≤ 500 e / ≤ 2000 e / above; p_LC = 0.7; Σ p_i² ≤ 1;
    // N cells sharing the load: e ≥ v_min·√N.

    [Theory]
    [InlineData(400.0, 0.5)]
    [InlineData(500.0, 0.5)]
    [InlineData(1500.0, 1.0)]
    [InlineData(3000.0, 1.5)]
    public void TheInstrumentErrorStepsWithTheLoad(double loadInE, double mpeInE)
    {
        Assert.Equal(mpeInE, LoadCellErrorBudget.ClassIIIMpeInE(loadInE));
    }

    [Fact]
    public void AClassC3CellAtFullScaleMayErrBy1Point05Intervals()
    {
        // C3: 3000 intervals; at 3000 v the load cell's share is 0.7 × 1.5 v = 1.05 v,
        // i.e. 1.05/3000 = 0.035 % of capacity: a datasheet's "combined error 0.02 % RO" lies within it.
        var mpeInV = LoadCellErrorBudget.LoadCellMpeInV(3000);

        Assert.Equal(1.05, mpeInV, 12);
        Assert.True(0.02 / 100 < mpeInV / 3000);
    }

    [Fact]
    public void TheUsualSplitBetweenCellsIndicatorAndConnectionsFitsTheWholeError()
    {
        // Load cells 0.7, indicator 0.5, connecting elements 0.5: 0.49 + 0.25 + 0.25 = 0.99 ≤ 1.
        Assert.True(LoadCellErrorBudget.ApportioningIsValid([0.7, 0.5, 0.5]));
        Assert.False(LoadCellErrorBudget.ApportioningIsValid([0.8, 0.5, 0.5]));
    }

    [Fact]
    public void FourEqualCellsHaveTwiceTheUncertaintyOfOneAndNeedTwiceTheInterval()
    {
        var u = LoadCellErrorBudget.CellStandardUncertaintyKn(0.02, 2000);

        Assert.Equal(0.4 / Math.Sqrt(3), u, 12);
        Assert.Equal(2 * u, LoadCellErrorBudget.SumStandardUncertaintyKn([u, u, u, u]), 12);
        Assert.Equal(2 * 0.1, LoadCellErrorBudget.MinimumInstrumentIntervalKn(0.1, 4), 12);
    }
}
