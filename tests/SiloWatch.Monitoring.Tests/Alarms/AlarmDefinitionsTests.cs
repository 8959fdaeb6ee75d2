using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Tests.Alarms;

public sealed class AlarmDefinitionsTests
{
    [Fact]
    public void WallLoadAlarmsComeFromThePlantLimitsAndAreEnabledOnlyWhileDischarging()
    {
        var silo = DemoPlant.Silo("S1");
        var definitions = AlarmDefinitions.ForSilo(silo, DemoPlant.Model("S1"));

        var a1 = definitions.Single(d => d.Id == "brackenford/S1/asymmetry-a1-R1");
        Assert.Equal(silo.Options.AlarmLimits.AsymmetryRatioA1, a1.Setpoint);
        Assert.Equal([DischargeState.Discharging], a1.EnabledIn);
        Assert.True(a1.Latching);
        Assert.Equal(silo.Options.AlarmLimits.ExcessLoadRatio, definitions.Single(d => d.Id == "brackenford/S1/excess-R2").Setpoint);
        Assert.Equal(silo.Options.AlarmLimits.OverfillPercent, definitions.Single(d => d.Id.EndsWith("/overfill", StringComparison.Ordinal)).Setpoint);
        Assert.Equal([DischargeState.Idle], definitions.Single(d => d.Id.EndsWith("/idle-mass-change", StringComparison.Ordinal)).EnabledIn);
        Assert.Equal(silo.Options.Sensors.Count, definitions.Count(d => d.Id.Contains("/sensor-bad-", StringComparison.Ordinal)));
        Assert.DoesNotContain(definitions, d => d.Id.Contains("asymmetry-a2", StringComparison.Ordinal)); // no A2 limit configured
    }

    [Fact]
    public void WallLoadTextsCarryTheCautionAndSayUnapprovedLimitsArePlaceholders()
    {
        var definitions = AlarmDefinitions.ForSilo(DemoPlant.Silo("S1"), DemoPlant.Model("S1"));
        foreach (var d in definitions.Where(d => d.Id.Contains("asymmetry", StringComparison.Ordinal) || d.Id.Contains("excess", StringComparison.Ordinal)))
        {
            Assert.Contains("Never enter the silo", d.Message, StringComparison.Ordinal);
            Assert.Contains("structural engineer", d.Message, StringComparison.Ordinal);
            Assert.Contains("placeholders", d.Message, StringComparison.Ordinal); // the demo's EngineerApproved is false
        }
    }

    [Fact]
    public void ASquareSiloWithoutModelledRingsGetsNoWallAlarmAndAFloorWeighedSiloNoSupportAlarm()
    {
        var square = AlarmDefinitions.ForSilo(DemoPlant.Silo("F1"), DemoPlant.Model("F1"));
        Assert.DoesNotContain(square, d => d.Id.Contains("asymmetry", StringComparison.Ordinal));
        Assert.Contains(square, d => d.Id.EndsWith("/support-overload", StringComparison.Ordinal));

        var cement = AlarmDefinitions.ForSilo(DemoPlant.Silo("C1"), DemoPlant.Model("C1"));
        Assert.DoesNotContain(cement, d => d.Id.EndsWith("/support-overload", StringComparison.Ordinal)); // SupportCapacityKn 0
        Assert.Contains(cement, d => d.Id.EndsWith("/asymmetry-a1-R1", StringComparison.Ordinal));
    }

    [Fact]
    public void EveryDefinitionIsValidForTheEngine()
    {
        var all = DemoPlant.Registry.Silos.SelectMany(s => AlarmDefinitions.ForSilo(s, DemoPlant.Model(s.SiloId))).ToList();
        var engine = new AlarmEngine(all, TimeProvider.System);
        Assert.Equal(all.Count, engine.Definitions.Count);
        Assert.All(all, d => Assert.InRange(d.Priority, 1, 4));
    }
}
