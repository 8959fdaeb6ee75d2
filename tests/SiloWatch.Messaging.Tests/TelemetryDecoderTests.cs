using System.Text;
using Microsoft.Extensions.Time.Testing;
using SiloWatch.Messaging.Tests.Support;

namespace SiloWatch.Messaging.Tests;

public sealed class TelemetryDecoderTests
{
    // 2026-12-01T10:15:02.250Z, the time of the contract's examples, as epoch milliseconds.
    private static readonly long ExampleMs = new DateTimeOffset(2026, 12, 1, 10, 15, 2, 250, TimeSpan.Zero).ToUnixTimeMilliseconds();

    private readonly FakeTimeProvider _time = new(DemoPlant.Now);
    private readonly TelemetryDecoder _decoder = new(DemoPlant.S1, new TelemetryDecoderOptions());
    private readonly CollectingReceiver _receiver = new();

    private long NowMs => _time.GetUtcNow().ToUnixTimeMilliseconds();

    private DecodeOutcome Decode(string json) => _decoder.Decode(Encoding.UTF8.GetBytes(json), NowMs, _receiver);

    private static int SensorIndex(string id) => DemoPlant.S1.TryGetSensor(id, out var sensor) ? sensor.Index : throw new ArgumentException(id);

    private static string Good(string sensor = "LC1", double value = 1.2345) =>
        $$"""{"sensor":"{{sensor}}","value":{{value.ToString(System.Globalization.CultureInfo.InvariantCulture)}},"unit":"mV/V"}""";

    [Fact]
    public void ASingleSampleWithAnIsoTimestampIsAccepted()
    {
        var outcome = Decode("""{"pub":"gw-east-1","seq":1842,"ts":"2026-12-01T10:15:02.250Z","sensor":"LC1","value":1.2345,"unit":"mV/V"}""");

        Assert.Equal(new DecodeOutcome(1, 0, SequenceStatus.First, 0), outcome);
        var sample = Assert.Single(_receiver.Samples);
        Assert.Equal(DemoPlant.S1.Index, sample.SiloIndex);
        Assert.Equal(SensorIndex("LC1"), sample.SensorIndex);
        Assert.Equal(ExampleMs, sample.TimestampMs);
        Assert.Equal(1.2345, sample.Value);
    }

    [Fact]
    public void ASingleSampleWithEpochMillisecondsIsAccepted()
    {
        var outcome = Decode($$"""{"ts":{{ExampleMs}},"sensor":"T-R1-000","value":11.5,"unit":"degC"}""");

        Assert.Equal(new DecodeOutcome(1, 0, SequenceStatus.Absent, 0), outcome);
        Assert.Equal(new Plant.TelemetrySample(DemoPlant.S1.Index, SensorIndex("T-R1-000"), ExampleMs, 11.5), Assert.Single(_receiver.Samples));
    }

    [Fact]
    public void AnIsoTimestampWithAnOffsetIsConvertedToUtc()
    {
        Decode("""{"ts":"2026-12-01T11:15:02.250+01:00","sensor":"LC1","value":1,"unit":"mV/V"}""");

        Assert.Equal(ExampleMs, Assert.Single(_receiver.Samples).TimestampMs);
    }

    [Fact]
    public void ABatchUsesTheBatchTimestampUnlessASampleHasItsOwn()
    {
        var own = ExampleMs - 500;
        var outcome = Decode($$"""
            {"pub":"gw-east-1","seq":1843,"ts":{{ExampleMs}},"samples":[
              {"sensor":"LC1","value":1.2345,"unit":"mV/V"},
              {"sensor":"T-R1-000","ts":{{own}},"value":11.5,"unit":"degC"},
              {"sensor":"SG-R1-060","ts":"2026-12-01T10:15:01.750Z","value":-0.25,"unit":"mV/V"}]}
            """);

        Assert.Equal(new DecodeOutcome(3, 0, SequenceStatus.First, 0), outcome);
        Assert.Equal(
            [(SensorIndex("LC1"), ExampleMs, 1.2345), (SensorIndex("T-R1-000"), own, 11.5), (SensorIndex("SG-R1-060"), own, -0.25)],
            _receiver.Samples.Select(s => (s.SensorIndex, s.TimestampMs, s.Value)));
    }

    [Fact]
    public void MessageFieldsMayFollowTheSamplesArray()
    {
        var outcome = Decode($$"""{"samples":[{{Good()}}],"ts":{{ExampleMs}},"seq":7,"pub":"gw-east-1"}""");

        Assert.Equal(new DecodeOutcome(1, 0, SequenceStatus.First, 0), outcome);
        Assert.Equal(ExampleMs, Assert.Single(_receiver.Samples).TimestampMs);
    }

    [Fact]
    public void EscapedSensorIdsAndUnitsAreReadUnescaped()
    {
        var outcome = Decode($$"""{"ts":{{ExampleMs}},"sensor":"LC\u0031","value":1,"unit":"mV\/V"}""");

        Assert.Equal(1, outcome.Accepted);
        Assert.Equal(SensorIndex("LC1"), Assert.Single(_receiver.Samples).SensorIndex);
    }

    [Fact]
    public void UnknownFieldsAreIgnoredForForwardCompatibility()
    {
        var outcome = Decode($$"""{"ts":{{ExampleMs}},"fw":{"v":[1,2,3]},"samples":[{"sensor":"LC1","q":"good","value":1,"unit":"mV/V"}]}""");

        Assert.Equal(1, outcome.Accepted);
        Assert.Empty(_receiver.Rejections);
    }

    public static TheoryData<string, RejectReason, string?> BadSamples() => new()
    {
        { """{"sensor":"LC9","value":1,"unit":"mV/V"}""", RejectReason.UnknownSensor, "LC9" },
        { """{"sensor":"LC1","value":1,"unit":"V"}""", RejectReason.WrongUnit, "LC1" },
        { """{"sensor":"T-R1-000","value":11,"unit":"mV/V"}""", RejectReason.WrongUnit, "T-R1-000" },
        { """{"sensor":"LC1","value":1,"unit":7}""", RejectReason.WrongUnit, "LC1" },
        { """{"sensor":"LC1","value":"NaN","unit":"mV/V"}""", RejectReason.NotFinite, "LC1" },
        { """{"sensor":"LC1","value":"-Infinity","unit":"mV/V"}""", RejectReason.NotFinite, "LC1" },
        { """{"sensor":"LC1","value":1e400,"unit":"mV/V"}""", RejectReason.NotFinite, "LC1" },
        { """{"sensor":"LC1","value":"1.5","unit":"mV/V"}""", RejectReason.InvalidValue, "LC1" },
        { """{"sensor":"LC1","value":null,"unit":"mV/V"}""", RejectReason.InvalidValue, "LC1" },
        { """{"sensor":"LC1","value":3.3,"unit":"mV/V"}""", RejectReason.OutOfRange, "LC1" },
        { """{"sensor":"T-R1-000","value":-40.1,"unit":"degC"}""", RejectReason.OutOfRange, "T-R1-000" },
        { """{"value":1,"unit":"mV/V"}""", RejectReason.MissingField, null },
        { """{"sensor":"LC1","unit":"mV/V"}""", RejectReason.MissingField, "LC1" },
        { """{"sensor":"LC1","value":1}""", RejectReason.MissingField, "LC1" },
        { """{"sensor":42,"value":1,"unit":"mV/V"}""", RejectReason.InvalidStructure, null },
        { """[1,2]""", RejectReason.InvalidStructure, null },
        { """{"sensor":"LC1","value":1,"unit":"mV/V","ts":"2026-12-01T10:15:02.250"}""", RejectReason.InvalidTimestamp, "LC1" },
        { """{"sensor":"LC1","value":1,"unit":"mV/V","ts":"yesterday"}""", RejectReason.InvalidTimestamp, "LC1" },
        { """{"sensor":"LC1","value":1,"unit":"mV/V","ts":-5}""", RejectReason.InvalidTimestamp, "LC1" },
        { """{"sensor":"LC1","value":1,"unit":"mV/V","ts":"2026-12-01T10:16:00Z"}""", RejectReason.TimestampInFuture, "LC1" },
        { """{"sensor":"LC1","value":1,"unit":"mV/V","ts":"2026-12-01T09:15:00Z"}""", RejectReason.TimestampTooOld, "LC1" },
    };

    [Theory]
    [MemberData(nameof(BadSamples))]
    public void EachBadSampleIsRejectedWithItsReasonWhileTheGoodOnesOfTheBatchArrive(string bad, RejectReason reason, string? sensor)
    {
        var outcome = Decode($$"""{"pub":"gw-east-1","seq":5,"ts":{{ExampleMs}},"samples":[{{Good("LC1", 1.0)}},{{bad}},{{Good("LC2", 2.0)}}]}""");

        Assert.Equal(new DecodeOutcome(2, 1, SequenceStatus.First, 0), outcome);
        Assert.Equal([(SensorIndex("LC1"), 1.0), (SensorIndex("LC2"), 2.0)], _receiver.Samples.Select(s => (s.SensorIndex, s.Value)));
        var rejection = _receiver.SingleRejection();
        Assert.Equal(reason, rejection.Reason);
        Assert.Equal(sensor, rejection.SensorId);
        Assert.Equal(("brackenford", "S1", "gw-east-1", (long?)5), (rejection.SiteId, rejection.SiloId, rejection.Publisher, rejection.Sequence));
        Assert.Equal(bad, rejection.Fragment);
        Assert.False(string.IsNullOrWhiteSpace(rejection.Detail));
    }

    [Fact]
    public void ASampleWithoutAnyTimestampIsMissingAField()
    {
        Decode($$"""{"samples":[{{Good()}}]}""");

        Assert.Equal(RejectReason.MissingField, _receiver.SingleRejection().Reason);
        Assert.Contains("ts", _receiver.SingleRejection().Detail, StringComparison.Ordinal);
    }

    [Fact]
    public void ZeroLatenessAcceptsOldSamplesForReplays()
    {
        var decoder = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions { MaxLateness = TimeSpan.Zero });

        var outcome = decoder.Decode("""{"ts":"2019-03-01T00:00:00Z","sensor":"LC1","value":1,"unit":"mV/V"}"""u8, NowMs, _receiver);

        Assert.Equal(1, outcome.Accepted);
    }

    [Fact]
    public void TheFutureSkewIsMeasuredAgainstTheGivenClock()
    {
        const string json = """{"ts":"2026-12-01T10:15:40Z","sensor":"LC1","value":1,"unit":"mV/V"}""";
        Assert.Equal(RejectReason.TimestampInFuture, Assert.Single(RejectionsOf(json)).Reason);

        _time.Advance(TimeSpan.FromSeconds(10)); // 10:15:13: 27 s ahead is within the 30 s skew
        _receiver.Clear();
        Assert.Equal(1, Decode(json).Accepted);
    }

    public static TheoryData<string, RejectReason> BadMessages() => new()
    {
        { """{"sensor":"LC1","value":1,"unit":"mV/V" """, RejectReason.MalformedJson },
        { """{"sensor":"LC1","value":1,"unit":"mV/V"} {}""", RejectReason.MalformedJson },
        { """{"sensor":"LC1","value":NaN,"unit":"mV/V"}""", RejectReason.MalformedJson },
        { """{"sensor":"LC1","value":1,"unit":"mV/V",}""", RejectReason.MalformedJson },
        { "", RejectReason.MalformedJson },
        { "\"just a string\"", RejectReason.InvalidStructure },
        { """{"samples":{"sensor":"LC1"}}""", RejectReason.InvalidStructure },
        { """{"samples":[],"sensor":"LC1"}""", RejectReason.InvalidStructure },
        { """{"pub":17,"sensor":"LC1","value":1,"unit":"mV/V"}""", RejectReason.InvalidStructure },
        { """{"seq":-1,"sensor":"LC1","value":1,"unit":"mV/V"}""", RejectReason.InvalidStructure },
        { """{"seq":1.5,"sensor":"LC1","value":1,"unit":"mV/V"}""", RejectReason.InvalidStructure },
        { """{"sensor":"LC1","value":1,"unit":"mV/V","x":[[[[[[[[1]]]]]]]]}""", RejectReason.TooDeep },
    };

    [Theory]
    [MemberData(nameof(BadMessages))]
    public void AMessageThatCannotBeReadIsRejectedWholeOnce(string json, RejectReason reason)
    {
        var outcome = Decode(json);

        Assert.Equal(0, outcome.Accepted);
        Assert.Equal(1, outcome.Rejected);
        Assert.Empty(_receiver.Samples);
        var rejection = _receiver.SingleRejection();
        Assert.Equal(reason, rejection.Reason);
        Assert.Equal(json, rejection.Fragment);
    }

    [Fact]
    public void APayloadOverTheLimitIsRejectedUnreadWithATruncatedFragment()
    {
        var decoder = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions { MaxPayloadBytes = 1024 });
        var json = $$"""{"samples":[{{string.Join(",", Enumerable.Repeat(Good(), 40))}}]}""";

        var outcome = decoder.Decode(Encoding.UTF8.GetBytes(json), NowMs, _receiver);

        Assert.Equal(new DecodeOutcome(0, 1, SequenceStatus.Absent, 0), outcome);
        var rejection = _receiver.SingleRejection();
        Assert.Equal(RejectReason.PayloadTooLarge, rejection.Reason);
        Assert.Equal(TelemetryRejection.MaxFragmentBytes, rejection.Fragment.Length);
    }

    [Fact]
    public void MoreSamplesThanTheLimitRejectTheMessageOnce()
    {
        var decoder = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions { MaxSamplesPerMessage = 10 });
        var json = $$"""{"pub":"p","seq":1,"ts":{{ExampleMs}},"samples":[{{string.Join(",", Enumerable.Repeat(Good(), 11))}}]}""";

        var outcome = decoder.Decode(Encoding.UTF8.GetBytes(json), NowMs, _receiver);

        Assert.Equal((0, 1), (outcome.Accepted, outcome.Rejected));
        Assert.Equal(RejectReason.TooManySamples, _receiver.SingleRejection().Reason);
        Assert.Empty(_receiver.Samples);
    }

    [Fact]
    public void NestingUpToTheLimitIsAcceptedAndOneLevelMoreIsNot()
    {
        // The root object is level 1, so MaxDepth 8 allows 7 nested arrays (levels 2..8) in an unknown field.
        var ok = $$"""{"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V","x":[[[[[[[1]]]]]]]}""";
        var tooDeep = $$"""{"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V","x":[[[[[[[[1]]]]]]]]}""";

        Assert.Equal(1, Decode(ok).Accepted);
        _receiver.Clear();
        Decode(tooDeep);
        Assert.Equal(RejectReason.TooDeep, _receiver.SingleRejection().Reason);
    }

    [Fact]
    public void SequenceNumbersInOrderAreReportedAsSuch()
    {
        Assert.Equal(SequenceStatus.First, Decode(Message("gw-1", 10)).Sequence);
        Assert.Equal(SequenceStatus.InOrder, Decode(Message("gw-1", 11)).Sequence);
        Assert.Equal(new DecodeOutcome(1, 0, SequenceStatus.InOrder, 0), Decode(Message("gw-1", 12)));
    }

    [Fact]
    public void AGapIsCountedAndALateFillOfItIsAccepted()
    {
        Decode(Message("gw-1", 10));

        Assert.Equal(new DecodeOutcome(1, 0, SequenceStatus.Gap, 3), Decode(Message("gw-1", 14)));
        Assert.Equal(new DecodeOutcome(1, 0, SequenceStatus.LateFill, 0), Decode(Message("gw-1", 12)));
        Assert.Equal(SequenceStatus.Duplicate, Decode(Message("gw-1", 12)).Sequence);
        Assert.Equal(SequenceStatus.InOrder, Decode(Message("gw-1", 15)).Sequence);
        Assert.Equal(4, _receiver.Samples.Count);
    }

    [Fact]
    public void ADuplicateRejectsTheWholeMessageWithOneRejection()
    {
        var batch = $$"""{"pub":"gw-1","seq":3,"ts":{{ExampleMs}},"samples":[{{Good("LC1")}},{{Good("LC2")}},{{Good("LC3")}}]}""";
        Decode(batch);
        _receiver.Clear();

        var outcome = Decode(batch);

        Assert.Equal(new DecodeOutcome(0, 1, SequenceStatus.Duplicate, 0), outcome);
        Assert.Empty(_receiver.Samples);
        var rejection = _receiver.SingleRejection();
        Assert.Equal((RejectReason.DuplicateMessage, "gw-1", (long?)3), (rejection.Reason, rejection.Publisher, rejection.Sequence));
    }

    [Fact]
    public void ASequenceFarBelowTheLastOrZeroIsAPublisherReset()
    {
        Decode(Message("gw-1", 500));

        Assert.Equal(SequenceStatus.Reset, Decode(Message("gw-1", 100)).Sequence);
        Assert.Equal(SequenceStatus.InOrder, Decode(Message("gw-1", 101)).Sequence);
        Assert.Equal(SequenceStatus.Reset, Decode(Message("gw-1", 0)).Sequence);
        Assert.Equal(SequenceStatus.InOrder, Decode(Message("gw-1", 1)).Sequence);
        Assert.Equal(5, _receiver.Samples.Count);
    }

    [Fact]
    public void ARepeatedFirstMessageWithSeqZeroIsADuplicate()
    {
        Decode(Message("gw-1", 0));

        Assert.Equal(SequenceStatus.Duplicate, Decode(Message("gw-1", 0)).Sequence);
        Assert.Equal(SequenceStatus.InOrder, Decode(Message("gw-1", 1)).Sequence);
    }

    [Fact]
    public void TheDuplicateWindowCoversTheLast64Sequences()
    {
        for (var seq = 1; seq <= 100; seq++)
        {
            Decode(Message("gw-1", seq));
        }

        Assert.Equal(SequenceStatus.Duplicate, Decode(Message("gw-1", 100 - 63)).Sequence);
        Assert.Equal(SequenceStatus.Reset, Decode(Message("gw-1", 100 - 64)).Sequence);
    }

    [Fact]
    public void PublishersAreTrackedSeparately()
    {
        Decode(Message("gw-1", 7));

        Assert.Equal(SequenceStatus.First, Decode(Message("gw-2", 7)).Sequence);
        Assert.Equal(SequenceStatus.InOrder, Decode(Message("gw-1", 8)).Sequence);
    }

    [Fact]
    public void WithoutSeqTheSequenceIsAbsentAndRepeatsAreAccepted()
    {
        var json = $$"""{"pub":"gw-1","ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}""";

        Assert.Equal(new DecodeOutcome(1, 0, SequenceStatus.Absent, 0), Decode(json));
        Assert.Equal(new DecodeOutcome(1, 0, SequenceStatus.Absent, 0), Decode(json));
    }

    [Fact]
    public void AMessageWithAnInvalidPublisherDoesNotTouchAnyPublishersSequence()
    {
        Decode($$"""{"pub":17,"seq":5,"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}""");

        Assert.Equal(RejectReason.InvalidStructure, _receiver.SingleRejection().Reason);
        Assert.Equal(SequenceStatus.First, Decode($$"""{"seq":5,"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}""").Sequence);
        Assert.Equal(SequenceStatus.Duplicate, Decode($$"""{"seq":5,"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}""").Sequence);
    }

    [Fact]
    public void TheNumberOfTrackedPublishersIsBoundedAndTheLeastRecentlySeenIsForgotten()
    {
        var decoder = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions { MaxPublishersPerSilo = 64 });
        for (var p = 0; p < 100; p++)
        {
            decoder.Decode(Encoding.UTF8.GetBytes(Message($"gw-{p}", 1)), NowMs, _receiver);
        }

        Assert.Equal(64, decoder.TrackedPublishers);
        Assert.Equal(SequenceStatus.InOrder, decoder.Decode(Encoding.UTF8.GetBytes(Message("gw-99", 2)), NowMs, _receiver).Sequence);
        Assert.Equal(SequenceStatus.First, decoder.Decode(Encoding.UTF8.GetBytes(Message("gw-0", 2)), NowMs, _receiver).Sequence);
    }

    [Fact]
    public void DecodingValidBatchesAllocatesNothingPerMessage()
    {
        var samples = string.Join(",", Enumerable.Repeat(Good(), 50));
        var payloads = Enumerable.Range(1, 201)
            .Select(seq => Encoding.UTF8.GetBytes($$"""{"pub":"gw-1","seq":{{seq}},"ts":{{ExampleMs}},"samples":[{{samples}}]}"""))
            .ToArray();
        var counter = new CountingReceiver();
        _decoder.Decode(payloads[0], NowMs, counter); // warm-up: the slot array grows, the publisher is registered

        var before = GC.GetAllocatedBytesForCurrentThread();
        for (var i = 1; i < payloads.Length; i++)
        {
            _decoder.Decode(payloads[i], NowMs, counter);
        }

        var allocated = GC.GetAllocatedBytesForCurrentThread() - before;
        Assert.Equal(0, allocated);
        Assert.Equal(201 * 50, counter.Samples);
        Assert.Equal(0, counter.Rejections);
    }

    private List<TelemetryRejection> RejectionsOf(string json)
    {
        Decode(json);
        return _receiver.Rejections;
    }

    private static string Message(string pub, long seq) =>
        $$"""{"pub":"{{pub}}","seq":{{seq}},"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}""";

    [Fact]
    public void SequencePositionsRestoredInANewDecoderRecogniseARedeliveryAsADuplicate()
    {
        Decode($$"""{"pub":"gw-east-1","seq":1,"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}""");
        Decode($$"""{"pub":"gw-east-1","seq":2,"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}""");
        Decode($$"""{"pub":"gw-east-1","seq":4,"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}""");
        var saved = _decoder.CaptureSequences();

        var restarted = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions());
        restarted.RestoreSequences(saved);
        var receiver = new CollectingReceiver();
        DecodeOutcome Again(long seq) => restarted.Decode(
            Encoding.UTF8.GetBytes($$"""{"pub":"gw-east-1","seq":{{seq}},"ts":{{ExampleMs}},"sensor":"LC1","value":1,"unit":"mV/V"}"""), NowMs, receiver);

        Assert.Equal(SequenceStatus.Duplicate, Again(2).Sequence);
        Assert.Equal(SequenceStatus.LateFill, Again(3).Sequence);
        Assert.Equal(SequenceStatus.InOrder, Again(5).Sequence);
        Assert.Equal(2, receiver.Samples.Count);
        Assert.Equal(RejectReason.DuplicateMessage, Assert.Single(receiver.Rejections).Reason);
    }
}
