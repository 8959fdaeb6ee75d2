using SiloWatch.Messaging;
using SiloWatch.Plant;
using SiloWatch.Simulator.Scenarios;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

/// <summary>The simulator's stream read by the service's own decoder (src/SiloWatch.Messaging): the contract from the other side.</summary>
public sealed class ServiceDecoderTests
{
    [Fact]
    public void TheServicesDecoderAcceptsEverySampleAndSeesTheNetworksMisbehaviour()
    {
        var scenario = ScenarioLoader.LoadFile(TestPlant.ScenarioPath("demo"));
        scenario.Network.DuplicateProbability = 0.01;
        scenario.Network.ReorderProbability = 0.01;
        var model = TestPlant.Model(scenario);
        var registry = new PlantRegistry(TestPlant.Plant);
        var decoders = registry.Silos.ToDictionary(s => s.SiloId, s => new TelemetryDecoder(s, new TelemetryDecoderOptions()));
        var receiver = new CountingReceiver();
        var statuses = new List<(string Silo, DecodeOutcome Outcome)>();
        long samples = 0;
        foreach (var tick in model.Run())
        {
            foreach (var m in tick.Messages)
            {
                // The receiver's clock: half a second after the message's own time (the stream's own pace).
                var now = tick.Time.ToUnixTimeMilliseconds() + 500;
                var outcome = decoders[m.Message.Silo].Decode(m.Message.ToPayload(), now, receiver);
                statuses.Add((m.Message.Silo, outcome));
                if (!m.IsDuplicate)
                {
                    samples += m.Message.Samples.Count;
                }
            }
        }

        // Every sample of every original message is accepted; only the duplicates are turned away.
        Assert.Equal(samples, receiver.Accepted);
        Assert.All(statuses.Where(s => s.Outcome.Rejected > 0), s => Assert.Equal(SequenceStatus.Duplicate, s.Outcome.Sequence));
        Assert.Equal(model.Network.Duplicated, statuses.Count(s => s.Outcome.Sequence == SequenceStatus.Duplicate));
        Assert.Equal(model.Network.Reordered, statuses.Count(s => s.Outcome.Sequence == SequenceStatus.LateFill));
        Assert.DoesNotContain(statuses, s => s.Outcome.Sequence == SequenceStatus.Reset);

        // The 30 s dropout of the demo shows as a gap of 30 messages on every silo.
        foreach (var silo in registry.Silos)
        {
            Assert.Contains(statuses, s => s.Silo == silo.SiloId && s.Outcome.Sequence == SequenceStatus.Gap && s.Outcome.MissingMessages >= 30);
        }
    }

    private sealed class CountingReceiver : ITelemetryReceiver
    {
        public long Accepted { get; private set; }

        public List<TelemetryRejection> Rejections { get; } = [];

        public void OnSample(in TelemetrySample sample) => Accepted++;

        public void OnRejected(TelemetryRejection rejection) => Rejections.Add(rejection);
    }
}
