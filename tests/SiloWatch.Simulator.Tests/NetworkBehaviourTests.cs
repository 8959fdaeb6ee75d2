using SiloWatch.Simulator.Scenarios;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class NetworkBehaviourTests
{
    [Fact]
    public void ADropoutLosesItsMessagesAndTheSeqJumpsOverThem()
    {
        var run = Run(new ScenarioEvent { At = TimeSpan.FromMinutes(1), Type = ScenarioEventType.Dropout, Duration = TimeSpan.FromSeconds(30) });
        var start = run.Ticks[0].Time;
        var s1 = run.Messages("S1").ToList();
        Assert.DoesNotContain(s1, m => m.Timestamp >= start + TimeSpan.FromMinutes(1) && m.Timestamp < start + TimeSpan.FromSeconds(90));
        var gap = s1.Zip(s1.Skip(1)).Single(p => p.Second.Seq - p.First.Seq > 1);
        Assert.Equal(31, gap.Second.Seq - gap.First.Seq);
    }

    [Fact]
    public void AfterAnOutageTheBufferedMessagesArriveAtOnceInOrderWithTheirOwnTimestamps()
    {
        var run = Run(new ScenarioEvent { At = TimeSpan.FromMinutes(1), Type = ScenarioEventType.Outage, Duration = TimeSpan.FromSeconds(40) });
        var start = run.Ticks[0].Time;
        Assert.All(run.Ticks.Where(t => t.Time >= start + TimeSpan.FromMinutes(1) && t.Time < start + TimeSpan.FromSeconds(100)), t => Assert.Empty(t.Messages));
        var burst = run.Ticks.Single(t => t.Time == start + TimeSpan.FromSeconds(100));
        // 40 buffered ticks × 4 silos, then this tick's own 4 messages.
        Assert.Equal((40 * 4) + 4, burst.Messages.Count);
        var s1 = burst.Messages.Where(m => m.Message.Silo == "S1").Select(m => m.Message).ToList();
        Assert.Equal(41, s1.Count);
        Assert.True(s1.Zip(s1.Skip(1)).All(p => p.Second.Seq == p.First.Seq + 1));
        Assert.Equal(start + TimeSpan.FromMinutes(1), s1[0].Timestamp);
        // Nothing was lost: the seq runs without a gap over the whole run.
        var all = run.Messages("S1").Select(m => m.Seq).ToList();
        Assert.Equal(Enumerable.Range(1, all.Count).Select(i => (long)i), all);
    }

    [Fact]
    public void DuplicatesRepeatTheSameMessageAndReorderingSwapsNeighbours()
    {
        var scenario = new ScenarioBuilder().Lasting(TimeSpan.FromMinutes(5)).WithFill("S1", 40).WithNetwork(duplicate: 0.05, reorder: 0.05).Build();
        var run = StreamCollector.RunToEnd(TestPlant.Model(scenario));
        var s1 = run.Ticks.SelectMany(t => t.Messages).Where(m => m.Message.Silo == "S1").ToList();
        var duplicates = s1.Where(m => m.IsDuplicate).ToList();
        Assert.NotEmpty(duplicates);
        foreach (var d in duplicates)
        {
            var i = s1.IndexOf(d);
            Assert.Equal(s1[i - 1].Message.ToPayload(), d.Message.ToPayload());
        }

        var seqs = s1.Where(m => !m.IsDuplicate).Select(m => m.Message.Seq).ToList();
        Assert.Contains(seqs.Zip(seqs.Skip(1)), p => p.Second < p.First);
        Assert.Equal(seqs.Count, seqs.Distinct().Count());
    }

    [Fact]
    public void AnOutageStillRunningAtTheEndIsFlushedByTheLastTick()
    {
        var run = Run(new ScenarioEvent { At = TimeSpan.FromMinutes(2), Type = ScenarioEventType.Outage, Duration = TimeSpan.FromMinutes(5) });
        var all = run.Messages("S1").Select(m => m.Seq).ToList();
        Assert.Equal(Enumerable.Range(1, 181).Select(i => (long)i), all);
    }

    private static StreamCollector Run(ScenarioEvent e)
    {
        var scenario = new ScenarioBuilder().Lasting(TimeSpan.FromMinutes(3))
            .WithFill("S1", 40).WithFill("S2", 40).WithFill("C1", 40).WithFill("F1", 40)
            .With(e).Build();
        return StreamCollector.RunToEnd(TestPlant.Model(scenario));
    }
}
