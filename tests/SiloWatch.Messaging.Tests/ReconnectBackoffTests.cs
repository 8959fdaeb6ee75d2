namespace SiloWatch.Messaging.Tests;

public sealed class ReconnectBackoffTests
{
    private static readonly TimeSpan First = TimeSpan.FromSeconds(1);
    private static readonly TimeSpan Max = TimeSpan.FromSeconds(30);

    [Theory]
    [InlineData(1, 1.0)]
    [InlineData(2, 2.0)]
    [InlineData(3, 4.0)]
    [InlineData(5, 16.0)]
    [InlineData(6, 30.0)]
    [InlineData(1000, 30.0)]
    public void TheDelayDoublesPerFailureUpToTheMaximum(int failures, double expectedSeconds) =>
        Assert.Equal(expectedSeconds, ReconnectBackoff.Delay(failures, First, Max, random01: 0.999999999).TotalSeconds, 3);

    [Fact]
    public void JitterTakesTheDelayDownToHalfAtMost()
    {
        Assert.Equal(2.0, ReconnectBackoff.Delay(3, First, Max, random01: 0).TotalSeconds, 6);
        Assert.Equal(3.0, ReconnectBackoff.Delay(3, First, Max, random01: 0.5).TotalSeconds, 6);
    }

    [Fact]
    public void NoFailureMeansNoDelay() => Assert.Equal(TimeSpan.Zero, ReconnectBackoff.Delay(0, First, Max, 0.5));
}
