using SiloWatch.Simulator.Cli;
using SiloWatch.Simulator.Output;
using SiloWatch.Simulator.Replay;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class ReplayTests
{
    [Fact]
    public void ARecordedRunReadsBackAsTheSameSamplesGroupedPerSiloAndInstant()
    {
        var scenario = new ScenarioBuilder().Lasting(TimeSpan.FromSeconds(20)).WithFill("S1", 40).WithFill("F1", 40).Build();
        var original = StreamCollector.RunToEnd(TestPlant.Model(scenario)).Ticks.SelectMany(t => t.Messages).Select(m => m.Message).ToList();
        using var csv = new StringWriter();
        using (var w = new RecordCsvWriter(csv))
        {
            original.ForEach(w.Write);
        }

        var replayed = ReplayRunner.ReadMessages(new StringReader(csv.ToString()), "replay").ToList();
        Assert.Equal(original.Count, replayed.Count);
        for (var i = 0; i < original.Count; i++)
        {
            Assert.Equal(original[i].Silo, replayed[i].Silo);
            Assert.Equal(original[i].Timestamp, replayed[i].Timestamp);
            Assert.Equal(original[i].Samples, replayed[i].Samples);
        }

        var s1 = replayed.Where(m => m.Silo == "S1").Select(m => m.Seq).ToList();
        Assert.Equal(Enumerable.Range(1, s1.Count).Select(i => (long)i), s1);
    }

    [Fact]
    public void ARecordWithoutTheHeaderIsRefused()
    {
        Assert.Throws<InvalidDataException>(() => ReplayRunner.ReadMessages(new StringReader("a,b\n"), "replay").ToList());
    }

    [Fact]
    public void TheCommandLineParsesTheDocumentedExample()
    {
        var o = SimulatorCommandLine.ToRunOptions(SimulatorCommandLine.Parse(
            ["run", "--scenario", "simulators/scenarios/normal-day.json", "--speed", "100", "--broker", "127.0.0.1:1883", "--truth", "out/truth.csv"]));
        Assert.Equal("simulators/scenarios/normal-day.json", o.ScenarioPath);
        Assert.Equal(100, o.Speed);
        Assert.Equal("127.0.0.1", o.BrokerHost);
        Assert.Equal(1883, o.BrokerPort);
        Assert.Equal("out/truth.csv", o.TruthCsvPath);

        var r = SimulatorCommandLine.ToReplayOptions(SimulatorCommandLine.Parse(["replay", "--file", "out/recorded.csv", "--speed", "10", "--broker", "127.0.0.1:2883"]));
        Assert.Equal("out/recorded.csv", r.FilePath);
        Assert.Equal(10, r.Speed);
        Assert.Equal(2883, r.BrokerPort);
    }

    [Theory]
    [InlineData("--broker", "localhost")]
    [InlineData("--colour", "red")]
    [InlineData("--speed", "fast")]
    public void ABadOptionIsRefusedWithItsName(string key, string value)
    {
        var ex = Assert.Throws<ArgumentException>(() => SimulatorCommandLine.ToRunOptions(SimulatorCommandLine.Parse(["run", "--scenario", "x.json", key, value])));
        Assert.Contains(key.TrimStart('-'), ex.Message, StringComparison.Ordinal);
    }
}
