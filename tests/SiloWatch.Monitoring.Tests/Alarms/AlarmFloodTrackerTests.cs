using Microsoft.Extensions.Time.Testing;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Tests.Alarms;

/// <summary>
/// ISA-18.2 alarm flood: more than 10 alarms in 10 minutes on a site [M: from memory of ISA-18.2-2016's
/// benchmark], counted across the silos of the site, whose engines run on different workers.
/// </summary>
public sealed class AlarmFloodTrackerTests
{
    private readonly FakeTimeProvider _time = new(new DateTimeOffset(2026, 3, 1, 8, 0, 0, TimeSpan.Zero));

    private static AlarmDefinition Definition(string site, string silo, int i) =>
        new($"{site}/{silo}/a{i}", site, silo, $"{silo}/c{i}", "u", AlarmDirection.High, 10, 1, 2, TimeSpan.Zero, TimeSpan.Zero, false, null, "test alarm");

    private AlarmEngine Engine(AlarmFloodTracker floods, string site, string silo) =>
        new(Enumerable.Range(0, 10).Select(i => Definition(site, silo, i)), _time, floods: floods);

    private static IReadOnlyList<AlarmTransition> Raise(AlarmEngine engine, string silo, int i) =>
        engine.Evaluate([new ConditionValue($"{silo}/c{i}", 50, DischargeState.Idle)]);

    [Fact]
    public void ElevenAlarmsSpreadOverTwoSilosOfASiteAreOneFloodReportedOnce()
    {
        var floods = new AlarmFloodTracker(new AlarmEngineOptions());
        var s1 = Engine(floods, "site", "S1");
        var s2 = Engine(floods, "site", "S2");
        var fromS1 = new List<AlarmTransition>();
        var fromS2 = new List<AlarmTransition>();

        // Six alarms on each silo, alternating, 30 s apart: no silo alone exceeds 10, the site does at the 11th.
        for (var i = 0; i < 6; i++)
        {
            _time.Advance(TimeSpan.FromSeconds(30));
            fromS1.AddRange(Raise(s1, "S1", i));
            _time.Advance(TimeSpan.FromSeconds(30));
            fromS2.AddRange(Raise(s2, "S2", i));
        }

        var all = fromS1.Concat(fromS2).ToList();
        var start = Assert.Single(all, t => t.AlarmId == ConditionKeys.Flood("site"));
        Assert.Contains(start, fromS1); // the 11th activation was S1's sixth
        Assert.Equal((AlarmStateName.Normal, AlarmStateName.Unacknowledged, 11.0), (start.From, start.To, start.Value));
        Assert.Equal(10, all.Count(t => t.To == AlarmStateName.Unacknowledged && !t.DuringFlood && t.AlarmId != start.AlarmId));
        Assert.Equal(2, all.Count(t => t.DuringFlood));

        // The flood is listed once for the site, by the engine that began it.
        Assert.Single(s1.Active.Concat(s2.Active), a => a.AlarmId == start.AlarmId);

        // Quiet for ten minutes: whichever silo is evaluated first reports the end, the other nothing.
        _time.Advance(TimeSpan.FromMinutes(11));
        var end = Assert.Single(s2.Evaluate([]));
        Assert.Equal((ConditionKeys.Flood("site"), AlarmStateName.Unacknowledged, AlarmStateName.Normal), (end.AlarmId, end.From, end.To));
        Assert.Contains("2 activations", end.Comment, StringComparison.Ordinal);
        Assert.Empty(s1.Evaluate([]));
        Assert.DoesNotContain(s1.Active.Concat(s2.Active), a => a.AlarmId == start.AlarmId);
    }

    [Fact]
    public void AlarmsOfAnotherSiteDoNotCountTowardAFlood()
    {
        var floods = new AlarmFloodTracker(new AlarmEngineOptions());
        var north = Engine(floods, "north", "S1");
        var south = Engine(floods, "south", "S1");
        var all = new List<AlarmTransition>();
        for (var i = 0; i < 10; i++)
        {
            _time.Advance(TimeSpan.FromSeconds(10));
            all.AddRange(Raise(north, "S1", i));
            all.AddRange(Raise(south, "S1", i));
        }

        // Twenty alarms in the window, but ten per site: no flood.
        Assert.Equal(20, all.Count(t => t.To == AlarmStateName.Unacknowledged));
        Assert.DoesNotContain(all, t => t.AlarmId.EndsWith("/alarm-flood", StringComparison.Ordinal) || t.DuringFlood);
    }

    [Fact]
    public void AlarmsOlderThanTheWindowNoLongerCount()
    {
        var floods = new AlarmFloodTracker(new AlarmEngineOptions());
        var engine = Engine(floods, "site", "S1");
        var other = Engine(floods, "site", "S2");
        var all = new List<AlarmTransition>();
        for (var i = 0; i < 10; i++)
        {
            // One alarm a minute and a bit: never more than 10 inside any 10-minute window.
            _time.Advance(TimeSpan.FromSeconds(61));
            all.AddRange(i % 2 == 0 ? Raise(engine, "S1", i) : Raise(other, "S2", i));
        }

        _time.Advance(TimeSpan.FromSeconds(61));
        all.AddRange(Raise(engine, "S1", 1));
        Assert.Equal(11, all.Count(t => t.To == AlarmStateName.Unacknowledged));
        Assert.DoesNotContain(all, t => t.DuringFlood);
    }
}
