using System.Text.Json;
using Microsoft.Extensions.Time.Testing;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Tests.Alarms;

/// <summary>
/// The alarm state model of ISA-18.2 / IEC 62682 [M: from memory of ISA-18.2-2016 §11 and its state
/// diagram: A normal, B unacknowledged, C acknowledged, D returned-to-normal unacknowledged, E latched,
/// F shelved, G suppressed by design, H out of service], on a fake clock.
/// </summary>
public sealed class AlarmEngineTests
{
    private const string Id = "site/S1/high";
    private const string Condition = "S1/level";

    private readonly FakeTimeProvider _time = new(new DateTimeOffset(2026, 3, 1, 8, 0, 0, TimeSpan.Zero));

    private static AlarmDefinition Definition(
        string id = Id, string condition = Condition, double setpoint = 10, double deadband = 1, TimeSpan? onDelay = null, TimeSpan? offDelay = null,
        bool latching = false, IReadOnlyList<DischargeState>? enabledIn = null) =>
        new(id, "site", "S1", condition, "u", AlarmDirection.High, setpoint, deadband, 2, onDelay ?? TimeSpan.Zero, offDelay ?? TimeSpan.Zero, latching, enabledIn, "test alarm");

    private AlarmEngine Engine(params AlarmDefinition[] definitions) => new(definitions.Length == 0 ? [Definition()] : definitions, _time);

    private static IReadOnlyList<AlarmTransition> Feed(AlarmEngine engine, double value, DischargeState state = DischargeState.Idle, string condition = Condition) =>
        engine.Evaluate([new ConditionValue(condition, value, state)]);

    private IReadOnlyList<AlarmTransition> FeedFor(AlarmEngine engine, int seconds, double value, DischargeState state = DischargeState.Idle)
    {
        var all = new List<AlarmTransition>();
        for (var i = 0; i < seconds; i++)
        {
            _time.Advance(TimeSpan.FromSeconds(1));
            all.AddRange(Feed(engine, value, state));
        }

        return all;
    }

    [Fact]
    public void ActivationMovesNormalToUnacknowledgedWithTimeValueAndWho()
    {
        var engine = Engine();
        Assert.Empty(Feed(engine, 5));
        var t = Assert.Single(Feed(engine, 12));

        Assert.Equal((AlarmStateName.Normal, AlarmStateName.Unacknowledged), (t.From, t.To));
        Assert.Equal(12, t.Value);
        Assert.Equal(AlarmEngine.System, t.By);
        Assert.Equal(_time.GetUtcNow().ToUnixTimeMilliseconds(), t.TimestampMs);
        Assert.Single(engine.Active);
    }

    [Fact]
    public void AcknowledgeThenReturnToNormalGoesAcknowledgedThenNormal()
    {
        var engine = Engine();
        Feed(engine, 12);
        var ack = engine.Acknowledge(Id, "j.okafor", "seen, checking the level");
        Assert.Equal((AlarmStateName.Unacknowledged, AlarmStateName.Acknowledged, "j.okafor"), (ack!.From, ack.To, ack.By));
        Assert.Equal("seen, checking the level", ack.Comment);

        var back = Assert.Single(Feed(engine, 5));
        Assert.Equal((AlarmStateName.Acknowledged, AlarmStateName.Normal), (back.From, back.To));
        Assert.Empty(engine.Active);
        Assert.Null(engine.Acknowledge(Id, "j.okafor"));
    }

    [Fact]
    public void ReturnToNormalWhileUnacknowledgedWaitsForTheAcknowledgement()
    {
        var engine = Engine();
        Feed(engine, 12);
        var rtn = Assert.Single(Feed(engine, 5));
        Assert.Equal(AlarmStateName.ReturnedToNormalUnacknowledged, rtn.To);
        Assert.Single(engine.Active);

        var ack = engine.Acknowledge(Id, "m.silva");
        Assert.Equal((AlarmStateName.ReturnedToNormalUnacknowledged, AlarmStateName.Normal), (ack!.From, ack.To));
        Assert.Empty(engine.Active);
    }

    [Fact]
    public void ALatchedAlarmStaysUntilResetAndCannotBeResetWhileInAlarm()
    {
        var engine = Engine(Definition(latching: true));
        Feed(engine, 12);
        Assert.Null(engine.Reset(Id, "m.silva"));           // still in alarm
        engine.Acknowledge(Id, "m.silva");
        Assert.Equal(AlarmStateName.Latched, Assert.Single(Feed(engine, 5)).To);
        Assert.Empty(FeedFor(engine, 600, 5));               // stays latched however long it is normal

        var reset = engine.Reset(Id, "m.silva");
        Assert.Equal((AlarmStateName.Latched, AlarmStateName.Normal, "m.silva"), (reset!.From, reset.To, reset.By));
    }

    [Fact]
    public void TheOnDelayNeedsTheConditionToHoldWithoutABreak()
    {
        var engine = Engine(Definition(onDelay: TimeSpan.FromSeconds(5)));
        Assert.Empty(FeedFor(engine, 4, 12));
        Assert.Empty(FeedFor(engine, 1, 8));                 // a dip restarts the delay
        Assert.Empty(FeedFor(engine, 5, 12));                // 0..4 s into the new delay
        Assert.Equal(AlarmStateName.Unacknowledged, Assert.Single(FeedFor(engine, 1, 12)).To);
    }

    [Fact]
    public void TheDeadbandAndOffDelayHoldTheAlarmUntilTheValueIsClearlyAndLastinglyBack()
    {
        var engine = Engine(Definition(deadband: 1, offDelay: TimeSpan.FromSeconds(10)));
        Feed(engine, 12);
        engine.Acknowledge(Id, "op");
        Assert.Empty(FeedFor(engine, 60, 9.5));              // below the setpoint, inside the deadband
        Assert.Empty(FeedFor(engine, 9, 8));                 // clear, but not yet for the off-delay
        Assert.Equal(AlarmStateName.Normal, Assert.Single(FeedFor(engine, 2, 8)).To);
    }

    [Fact]
    public void AShelvedAlarmIsSilentUntilItsExpiryAndIsThenReEvaluated()
    {
        var engine = Engine();
        Feed(engine, 12);
        var shelve = engine.Shelve(Id, "a.berg", TimeSpan.FromMinutes(30), "level probe being replaced");
        Assert.Equal(AlarmStateName.Shelved, shelve!.To);
        Assert.Contains("level probe being replaced", shelve.Comment, StringComparison.Ordinal);

        Assert.Empty(FeedFor(engine, 60, 5));
        Assert.Empty(FeedFor(engine, 60, 15));               // in alarm again, but shelved
        var expiry = FeedFor(engine, 30 * 60, 15);
        var t = Assert.Single(expiry);
        Assert.Equal((AlarmStateName.Shelved, AlarmStateName.Unacknowledged, AlarmEngine.System), (t.From, t.To, t.By));
        Assert.Contains("expired", t.Comment, StringComparison.Ordinal);
    }

    [Fact]
    public void UnshelvingEarlyReturnsToNormalWhenTheConditionIsClear()
    {
        var engine = Engine();
        engine.Shelve(Id, "a.berg", TimeSpan.FromHours(2), "maintenance");
        FeedFor(engine, 10, 5);
        var t = engine.Unshelve(Id, "a.berg");
        Assert.Equal((AlarmStateName.Shelved, AlarmStateName.Normal, "a.berg"), (t!.From, t.To, t.By));
        Assert.Throws<ArgumentOutOfRangeException>(() => engine.Shelve(Id, "a.berg", TimeSpan.FromDays(3), "too long"));
        Assert.Throws<ArgumentException>(() => engine.Shelve(Id, " ", TimeSpan.FromHours(1), "no name"));
    }

    [Fact]
    public void AnAlarmMeantForDischargesIsSuppressedByDesignOutsideThem()
    {
        var engine = Engine(Definition(enabledIn: [DischargeState.Discharging]));
        var suppressed = Assert.Single(Feed(engine, 50, DischargeState.Idle));
        Assert.Equal(AlarmStateName.SuppressedByDesign, suppressed.To);
        Assert.Empty(FeedFor(engine, 60, 50, DischargeState.Filling));
        Assert.Empty(engine.Active);

        var enabled = Feed(engine, 50, DischargeState.Discharging);
        Assert.Equal([AlarmStateName.Normal, AlarmStateName.Unacknowledged], enabled.Select(t => t.To));

        // The discharge ends while the alarm stands: its condition ends and it waits for the acknowledgement.
        var ended = Feed(engine, 50, DischargeState.Settling);
        Assert.Equal(AlarmStateName.ReturnedToNormalUnacknowledged, Assert.Single(ended).To);
    }

    [Fact]
    public void OutOfServiceIgnoresValuesAndReturnsToServiceFromNormal()
    {
        var engine = Engine();
        var oos = engine.SetOutOfService(Id, "tech.1", true, "gauge rewiring");
        Assert.Equal(AlarmStateName.OutOfService, oos!.To);
        Assert.Empty(FeedFor(engine, 30, 99));
        Assert.True(Assert.Single(engine.Active).OutOfService);

        var back = engine.SetOutOfService(Id, "tech.1", false);
        Assert.Equal(AlarmStateName.Normal, back!.To);
        Assert.Equal(AlarmStateName.Unacknowledged, Assert.Single(Feed(engine, 99)).To);
    }

    [Fact]
    public void AnUnknownValueHoldsTheAlarmAndItsTimers()
    {
        var engine = Engine(Definition(offDelay: TimeSpan.FromSeconds(5)));
        Feed(engine, 12);
        Assert.Empty(FeedFor(engine, 60, double.NaN));
        Assert.True(engine.Get(Id).InAlarm);
    }

    [Fact]
    public void MoreThanTenAlarmsInTenMinutesOnASiteAreSummarisedByOneFloodTransition()
    {
        // ISA-18.2 flood: more than 10 alarms in 10 minutes [M: from memory].
        var definitions = Enumerable.Range(0, 15).Select(i => Definition(id: $"site/S1/a{i}", condition: $"c{i}")).ToArray();
        var engine = Engine(definitions);
        var all = new List<AlarmTransition>();
        for (var i = 0; i < 15; i++)
        {
            _time.Advance(TimeSpan.FromSeconds(20));
            all.AddRange(engine.Evaluate([new ConditionValue($"c{i}", 50, DischargeState.Idle)]));
        }

        var floods = all.Where(t => t.AlarmId == ConditionKeys.Flood("site")).ToList();
        var flood = Assert.Single(floods);
        Assert.Equal(AlarmStateName.Unacknowledged, flood.To);
        Assert.Equal(11, flood.Value);
        Assert.Equal(10, all.Count(t => t.To == AlarmStateName.Unacknowledged && !t.DuringFlood && t.AlarmId != flood.AlarmId));
        Assert.Equal(5, all.Count(t => t.DuringFlood));
        Assert.Contains(engine.Active, a => a.AlarmId == flood.AlarmId);

        // Quiet for ten minutes: the flood ends once, with the count.
        _time.Advance(TimeSpan.FromMinutes(11));
        var end = Assert.Single(engine.Evaluate([]));
        Assert.Equal((AlarmStateName.Unacknowledged, AlarmStateName.Normal), (end.From, end.To));
        Assert.Contains("5 activations", end.Comment, StringComparison.Ordinal);
    }

    [Fact]
    public void ARestartResumesEveryAlarmStateFromItsJsonSnapshot()
    {
        var engine = Engine(Definition(latching: true), Definition(id: "site/S1/other", condition: "S1/other"));
        Feed(engine, 12);
        engine.Shelve("site/S1/other", "a.berg", TimeSpan.FromHours(1), "probe out");
        var json = JsonSerializer.Serialize(engine.Snapshot());

        var restarted = Engine(Definition(latching: true));
        var problems = restarted.Restore(JsonSerializer.Deserialize<AlarmSnapshot>(json)!);

        Assert.Contains(problems, p => p.Contains("site/S1/other", StringComparison.Ordinal));
        Assert.Equal(AlarmStateName.Unacknowledged, restarted.Get(Id).State);
        Assert.Equal(AlarmStateName.Latched, Assert.Single(Feed(restarted, 5)).To);
    }

    [Fact]
    public void TransitionsRoundTripThroughSystemTextJson()
    {
        var engine = Engine();
        var t = Feed(engine, 12).Single();
        var back = JsonSerializer.Deserialize<AlarmTransition>(JsonSerializer.Serialize(t));
        Assert.Equal(t, back);
        var operatorAction = engine.Acknowledge(Id, "op")!;
        Assert.Equal(operatorAction, JsonSerializer.Deserialize<AlarmTransition>(JsonSerializer.Serialize(operatorAction)));
    }
}
