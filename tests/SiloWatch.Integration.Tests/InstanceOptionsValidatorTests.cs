using SiloWatch.Service.Hosting;

namespace SiloWatch.Integration.Tests;

/// <summary>The start-up check of the instance's durations: each failure names its key and value.</summary>
public sealed class InstanceOptionsValidatorTests
{
    private static IReadOnlyList<string> Failures(InstanceOptions options) =>
        new InstanceOptionsValidator().Validate(null, options).Failures?.ToList() ?? [];

    [Fact]
    public void TheDefaultsPass() => Assert.Empty(Failures(new InstanceOptions()));

    [Fact]
    public void AZeroPublishIntervalIsRefusedWithItsKey()
    {
        var failure = Assert.Single(Failures(new InstanceOptions { PublishInterval = TimeSpan.Zero, MinEvaluationInterval = TimeSpan.Zero }));
        Assert.StartsWith("Instance:PublishInterval = '00:00:00'", failure, StringComparison.Ordinal);
    }

    [Fact]
    public void AMinimumEvaluationIntervalLongerThanThePublishIntervalIsRefused()
    {
        var failure = Assert.Single(Failures(new InstanceOptions
        {
            PublishInterval = TimeSpan.FromMilliseconds(500),
            MinEvaluationInterval = TimeSpan.FromMilliseconds(600),
        }));
        Assert.Contains("Instance:MinEvaluationInterval = '00:00:00.6000000'", failure, StringComparison.Ordinal);
        Assert.Contains("00:00:00.5000000", failure, StringComparison.Ordinal);
    }

    [Fact]
    public void ANegativeStopDrainTimeoutIsRefused() =>
        Assert.Contains(Failures(new InstanceOptions { StopDrainTimeout = TimeSpan.FromSeconds(-1) }),
            f => f.StartsWith("Instance:StopDrainTimeout", StringComparison.Ordinal));
}
