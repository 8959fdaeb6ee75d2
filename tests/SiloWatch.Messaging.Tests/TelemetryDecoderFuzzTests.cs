using System.Text;
using SiloWatch.Messaging.Tests.Support;

namespace SiloWatch.Messaging.Tests;

/// <summary>
/// Random bytes and mutations of valid payloads through the decoder: bounded by count (fixed
/// seeds, so a failure reproduces), never by time.
/// </summary>
public sealed class TelemetryDecoderFuzzTests
{
    private const int Cases = 20_000;

    private static readonly string[] Seeds =
    [
        """{"pub":"gw-east-1","seq":1842,"ts":"2026-12-01T10:15:02.250Z","sensor":"LC1","value":1.2345,"unit":"mV/V"}""",
        """{"pub":"gw-east-1","seq":1843,"ts":1796120102250,"samples":[{"sensor":"LC1","value":1.2345,"unit":"mV/V"},{"sensor":"T-R1-000","ts":"2026-12-01T10:15:02.250Z","value":11.5,"unit":"degC"}]}""",
        """{"samples":[{"sensor":"SG-R1-060","value":-0.25,"unit":"mV\/V","ts":1796120102000}],"ts":"2026-12-01T10:15:02Z","seq":0}""",
    ];

    [Fact]
    public void RandomBytesNeverThrowAndEveryRejectionCarriesAReason()
    {
        var random = new Random(20261201);
        var decoder = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions { MaxPayloadBytes = 4096 });
        for (var i = 0; i < Cases; i++)
        {
            var payload = new byte[random.Next(0, 600)];
            random.NextBytes(payload);
            if (i % 2 == 0 && payload.Length > 0)
            {
                payload[0] = (byte)'{'; // get past the first token more often
            }

            Run(decoder, payload, i);
        }
    }

    [Fact]
    public void MutatedValidPayloadsNeverThrowAndEveryRejectionCarriesAReason()
    {
        var random = new Random(42);
        var decoder = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions());
        var seeds = Seeds.Select(Encoding.UTF8.GetBytes).ToArray();
        for (var i = 0; i < Cases; i++)
        {
            var payload = PayloadMutator.Mutate(seeds[i % seeds.Length], random);
            Run(decoder, payload, i);
        }
    }

    private static void Run(TelemetryDecoder decoder, byte[] payload, int caseNumber)
    {
        var receiver = new CountingReceiver
        {
            OnRejection = r =>
            {
                Assert.True(Enum.IsDefined(r.Reason), $"case {caseNumber}: undefined reason {r.Reason}");
                Assert.NotEqual(RejectReason.DecoderFault, r.Reason);
                Assert.False(string.IsNullOrWhiteSpace(r.Detail), $"case {caseNumber}: rejection without detail");
                Assert.True(Encoding.UTF8.GetByteCount(r.Fragment) <= TelemetryRejection.MaxFragmentBytes * 3, $"case {caseNumber}: fragment too long");
                Assert.Equal(("brackenford", "S1"), (r.SiteId, r.SiloId));
                _ = DeadLetterCodec.Encode(r, DemoPlant.NowMs); // a dead letter can always be written
            },
        };

        DecodeOutcome outcome;
        try
        {
            outcome = decoder.Decode(payload, DemoPlant.NowMs, receiver);
        }
        catch (Exception ex)
        {
            Assert.Fail($"case {caseNumber}: {ex.GetType().Name}: {ex.Message}\npayload: {Convert.ToBase64String(payload)}");
            throw;
        }

        Assert.Equal(receiver.Samples, outcome.Accepted);
        Assert.Equal(receiver.Rejections, outcome.Rejected);
        Assert.True(outcome.MissingMessages >= 0);
    }
}
