using System.Security.Cryptography;
using SiloWatch.Simulator.Model;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class DeterminismTests
{
    // One reference run shared by the two tests below (each demo run is 1 800 ticks of 4 silos).
    private static readonly Lazy<string> Reference = new(() => Digest(Model(seed: 42)));

    [Fact]
    public void TheSameSeedGivesAByteIdenticalMessageStream()
    {
        Assert.Equal(Reference.Value, Digest(Model(seed: 42)));
    }

    [Fact]
    public void AnotherSeedGivesAnotherStream()
    {
        Assert.NotEqual(Reference.Value, Digest(Model(seed: 43)));
    }

    [Fact]
    public void AboveRealTimeTheStartComesFromTheScenarioNotTheWallClock()
    {
        var options = Options(seed: 1);
        var early = SimulatorRunner.CreateModel(options, new DateTimeOffset(2026, 1, 1, 0, 0, 0, TimeSpan.Zero));
        var late = SimulatorRunner.CreateModel(options, new DateTimeOffset(2027, 5, 5, 5, 5, 5, TimeSpan.Zero));
        Assert.Equal(early.Start, late.Start);
        Assert.Equal(new DateTimeOffset(2026, 6, 21, 9, 0, 0, TimeSpan.Zero), early.Start);
    }

    [Fact]
    public void AtRealTimeTheStartIsNowSoTimestampsFollowTheWallClock()
    {
        var options = Options(seed: 1);
        options.Speed = 1;
        var now = new DateTimeOffset(2026, 12, 1, 10, 15, 2, 250, TimeSpan.Zero);
        var model = SimulatorRunner.CreateModel(options, now);
        Assert.Equal(new DateTimeOffset(2026, 12, 1, 10, 15, 2, TimeSpan.Zero), model.Start);
    }

    [Fact]
    public void ASpeedOutsideOneToAThousandIsRefused()
    {
        var options = Options(seed: 1);
        options.Speed = 1001;
        Assert.Throws<ArgumentOutOfRangeException>(() => SimulatorRunner.CreateModel(options, DateTimeOffset.UnixEpoch));
        options.Speed = 0.5;
        Assert.Throws<ArgumentOutOfRangeException>(() => SimulatorRunner.CreateModel(options, DateTimeOffset.UnixEpoch));
    }

    private static SimulatorRunOptions Options(int seed) => new()
    {
        PlantPath = TestPlant.PlantPath,
        MaterialsPath = TestPlant.MaterialsPath,
        ScenarioPath = TestPlant.ScenarioPath("demo"),
        Speed = 100,
        Seed = seed,
    };

    // The demo scenario has every kind of event (deliveries, eccentric discharge, gust, faults, dropout, duplicates).
    private static PlantModel Model(int seed) => SimulatorRunner.CreateModel(Options(seed), DateTimeOffset.UtcNow);

    private static string Digest(PlantModel model)
    {
        using var sha = IncrementalHash.CreateHash(HashAlgorithmName.SHA256);
        foreach (var tick in model.Run())
        {
            foreach (var m in tick.Messages)
            {
                sha.AppendData(System.Text.Encoding.UTF8.GetBytes(m.Message.Topic("silowatch")));
                sha.AppendData(m.Message.ToPayload());
            }
        }

        return Convert.ToHexString(sha.GetHashAndReset());
    }
}
