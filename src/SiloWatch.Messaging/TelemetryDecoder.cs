using System.Globalization;
using System.Text;
using System.Text.Json;
using SiloWatch.Plant;

namespace SiloWatch.Messaging;

/// <summary>
/// Decodes the telemetry payloads of one silo (contract v1: a single-sample object or a batch with
/// "samples"), checks every sample against the silo's sensors and tracks each publisher's
/// sequence. One instance per silo, used by one thread: it owns that silo's sequence state, so
/// it takes no locks. The hot path allocates nothing per sample; a rejection allocates its record.
/// Nothing in a payload makes <see cref="Decode"/> throw: every problem becomes a
/// <see cref="TelemetryRejection"/> with a specific <see cref="RejectReason"/>, and the good
/// samples of a batch are delivered even when others in it are rejected.
/// </summary>
public sealed class TelemetryDecoder
{
    private const int MaxIdBytes = 64;     // ids are at most 48 characters (PlantValidator); room for a few escapes
    private const int MaxPublisherBytes = 64;
    private const long MaxEpochMs = 253_402_300_799_999; // 9999-12-31T23:59:59.999Z

    private readonly SiloRef _silo;
    private readonly TelemetryDecoderOptions _options;
    private readonly byte[][] _unitsUtf8;
    private readonly double[] _rangeMin;
    private readonly double[] _rangeMax;
    private readonly SensorIdTable _sensorIds;
    private readonly SequenceTracker _sequences;
    private readonly long _maxFutureMs;
    private readonly long _maxLatenessMs;
    private readonly byte[] _publisher = new byte[MaxPublisherBytes];
    private Slot[] _slots = new Slot[16];
    private Slot _root;

    public TelemetryDecoder(SiloRef silo, TelemetryDecoderOptions options)
    {
        ArgumentNullException.ThrowIfNull(silo);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        _silo = silo;
        _options = options;
        _unitsUtf8 = [.. silo.Sensors.Select(s => Encoding.UTF8.GetBytes(s.Options.Unit))];
        _rangeMin = [.. silo.Sensors.Select(s => s.Options.RangeMin)];
        _rangeMax = [.. silo.Sensors.Select(s => s.Options.RangeMax)];
        _sensorIds = new SensorIdTable(silo.Sensors);
        _sequences = new SequenceTracker(options.MaxPublishersPerSilo);
        _maxFutureMs = (long)options.MaxFutureSkew.TotalMilliseconds;
        _maxLatenessMs = (long)options.MaxLateness.TotalMilliseconds;
    }

    public SiloRef Silo => _silo;

    /// <summary>Publishers currently tracked for sequence checks (bounded by MaxPublishersPerSilo).</summary>
    public int TrackedPublishers => _sequences.Count;

    /// <summary>The sequence position of every tracked publisher (for the silo's checkpoint).</summary>
    public IReadOnlyList<PublisherPosition> CaptureSequences() => _sequences.Capture();

    /// <summary>Restores the positions saved by <see cref="CaptureSequences"/> (before the first message is decoded).</summary>
    public void RestoreSequences(IEnumerable<PublisherPosition> positions)
    {
        ArgumentNullException.ThrowIfNull(positions);
        _sequences.Restore(positions);
    }

    /// <summary>
    /// Decodes one message, delivering accepted samples and rejections to <paramref name="receiver"/>
    /// synchronously, in payload order. <paramref name="nowUnixMs"/> is the receiver's clock, for
    /// the timestamp checks.
    /// </summary>
    public DecodeOutcome Decode(ReadOnlySpan<byte> payload, long nowUnixMs, ITelemetryReceiver receiver)
    {
        ArgumentNullException.ThrowIfNull(receiver);
        if (payload.Length > _options.MaxPayloadBytes)
        {
            Reject(receiver, RejectReason.PayloadTooLarge,
                Invariant($"payload of {payload.Length} bytes exceeds the limit of {_options.MaxPayloadBytes}"),
                null, null, null, payload, 0, payload.Length);
            return new DecodeOutcome(0, 1, SequenceStatus.Absent, 0);
        }

        var message = new MessageInfo();
        try
        {
            Parse(payload, ref message);
        }
        catch (JsonException ex)
        {
            message.SetError(RejectReason.MalformedJson, "not well-formed JSON: " + ex.Message, force: true);
        }
        catch (DepthExceededException)
        {
            message.SetError(RejectReason.TooDeep, Invariant($"JSON nested deeper than {_options.MaxDepth} levels"), force: true);
        }
#pragma warning disable CA1031 // the decoder must never throw on input: a fault is reported as a rejection
        catch (Exception ex)
#pragma warning restore CA1031
        {
            message.SetError(RejectReason.DecoderFault, "decoder fault: " + ex.GetType().Name + ": " + ex.Message, force: true);
        }

        // Sequence tracking needs well-formed JSON with a valid seq; a structural problem or an
        // oversized batch still counts as "received" so it does not open a false gap.
        var status = SequenceStatus.Absent;
        long missing = 0;
        string? publisher = null;
        if (message.HasSeq && !message.PublisherInvalid &&
            message.ErrorReason is null or RejectReason.InvalidStructure or RejectReason.TooManySamples)
        {
            // Without "pub" the seq is tracked under the anonymous publisher "".
            status = _sequences.Track(_publisher.AsSpan(0, message.PublisherLength), message.Seq, out missing, out var tracked);
            publisher = message.HasPublisher ? tracked : null;
        }

        if (message.ErrorReason is { } reason)
        {
            Reject(receiver, reason, message.ErrorDetail!, null, publisher ?? PublisherString(ref message),
                message.HasSeq ? message.Seq : null, payload, 0, payload.Length);
            return new DecodeOutcome(0, 1, status, missing);
        }

        if (status == SequenceStatus.Duplicate)
        {
            Reject(receiver, RejectReason.DuplicateMessage,
                Invariant($"message seq {message.Seq} from {(publisher is null ? "an anonymous publisher" : "publisher '" + publisher + "'")} was already received"),
                null, publisher, message.Seq, payload, 0, payload.Length);
            return new DecodeOutcome(0, 1, status, 0);
        }

        var accepted = 0;
        var rejected = 0;
        if (message.IsBatch)
        {
            for (var i = 0; i < message.SampleCount; i++)
            {
                Deliver(ref _slots[i], ref message, ref publisher, nowUnixMs, payload, receiver, ref accepted, ref rejected);
            }
        }
        else
        {
            CheckFields(ref _root, payload);
            Deliver(ref _root, ref message, ref publisher, nowUnixMs, payload, receiver, ref accepted, ref rejected);
        }

        return new DecodeOutcome(accepted, rejected, status, missing);
    }

    private void Deliver(ref Slot slot, ref MessageInfo message, ref string? publisher, long nowUnixMs, ReadOnlySpan<byte> payload,
        ITelemetryReceiver receiver, ref int accepted, ref int rejected)
    {
        if (Check(ref slot, ref message, nowUnixMs, out var sample))
        {
            receiver.OnSample(in sample);
            accepted++;
        }
        else
        {
            publisher ??= PublisherString(ref message);
            RejectSample(receiver, ref slot, ref message, publisher, payload);
            rejected++;
        }
    }

    private void Parse(ReadOnlySpan<byte> payload, ref MessageInfo message)
    {
        var reader = new Utf8JsonReader(payload, new JsonReaderOptions
        {
            // Our own check (DepthExceededException) fires first; the reader's limit is a backstop.
            MaxDepth = _options.MaxDepth + 1,
            CommentHandling = JsonCommentHandling.Disallow,
            AllowTrailingCommas = false,
        });

        if (!reader.Read())
        {
            message.SetError(RejectReason.MalformedJson, "empty payload", force: true);
            return;
        }

        if (reader.TokenType != JsonTokenType.StartObject)
        {
            message.SetError(RejectReason.InvalidStructure, "the payload must be a JSON object");
            SkipValue(ref reader);
            FinishDocument(ref reader);
            return;
        }

        // A single-sample message is its own sample: its fragment is the whole payload.
        ref var root = ref _root;
        root = Slot.Empty(0);
        root.Length = payload.Length;
        var rootHasSampleFields = false;
        var sawSamples = false;

        while (reader.Read() && reader.TokenType == JsonTokenType.PropertyName)
        {
            if (reader.ValueTextEquals("samples"u8))
            {
                reader.Read();
                if (sawSamples)
                {
                    message.SetError(RejectReason.InvalidStructure, "\"samples\" appears twice");
                    SkipValue(ref reader);
                }
                else if (reader.TokenType != JsonTokenType.StartArray)
                {
                    message.SetError(RejectReason.InvalidStructure, "\"samples\" must be an array of sample objects");
                    SkipValue(ref reader);
                }
                else
                {
                    ParseSamples(ref reader, ref message, payload);
                }

                sawSamples = true;
            }
            else if (reader.ValueTextEquals("pub"u8))
            {
                reader.Read();
                ParsePublisher(ref reader, ref message);
            }
            else if (reader.ValueTextEquals("seq"u8))
            {
                reader.Read();
                if (reader.TokenType == JsonTokenType.Number && reader.TryGetInt64(out var seq) && seq >= 0)
                {
                    message.Seq = seq;
                    message.HasSeq = true;
                }
                else
                {
                    message.SetError(RejectReason.InvalidStructure, "\"seq\" must be a non-negative integer");
                    SkipValue(ref reader);
                }
            }
            else if (reader.ValueTextEquals("ts"u8))
            {
                // The message's ts is the batch ts, and the ts of a single sample.
                reader.Read();
                message.BatchTs = ParseTimestamp(ref reader, out message.BatchTsMs);
                root.Ts = message.BatchTs;
                root.TsMs = message.BatchTsMs;
            }
            else if (ParseSampleField(ref reader, ref root))
            {
                rootHasSampleFields = true;
            }
        }

        if (reader.TokenType != JsonTokenType.EndObject)
        {
            throw new JsonException("unexpected token " + reader.TokenType);
        }

        FinishDocument(ref reader);

        if (sawSamples && rootHasSampleFields)
        {
            message.SetError(RejectReason.InvalidStructure, "a message has either \"samples\" or sensor/value/unit at its top level, not both");
        }

        message.IsBatch = sawSamples;
    }

    private static void FinishDocument(ref Utf8JsonReader reader)
    {
        // Anything after the root value (a second value, garbage) makes the reader throw here.
        while (reader.Read())
        {
        }
    }

    private void ParseSamples(ref Utf8JsonReader reader, ref MessageInfo message, ReadOnlySpan<byte> payload)
    {
        var count = 0;
        while (reader.Read() && reader.TokenType != JsonTokenType.EndArray)
        {
            count++;
            if (count > _options.MaxSamplesPerMessage)
            {
                message.SetError(RejectReason.TooManySamples,
                    Invariant($"more than {_options.MaxSamplesPerMessage} samples in one message"));
                SkipValue(ref reader);
                continue;
            }

            if (count > _slots.Length)
            {
                // Grows once to the largest batch seen, never beyond MaxSamplesPerMessage.
                Array.Resize(ref _slots, Math.Min(_slots.Length * 2, _options.MaxSamplesPerMessage));
            }

            ref var slot = ref _slots[count - 1];
            slot = Slot.Empty((int)reader.TokenStartIndex);
            if (reader.TokenType != JsonTokenType.StartObject)
            {
                slot.Flaw = Flaw.NotAnObject;
                SkipValue(ref reader);
                slot.Length = (int)reader.BytesConsumed - slot.Start;
                continue;
            }

            while (reader.Read() && reader.TokenType == JsonTokenType.PropertyName)
            {
                ParseSampleField(ref reader, ref slot);
            }

            slot.Length = (int)reader.BytesConsumed - slot.Start;
            CheckFields(ref slot, payload);
        }

        message.SampleCount = Math.Min(count, _options.MaxSamplesPerMessage);
    }

    /// <summary>Reads one sample property (reader on its name); false when it is not a sample field.</summary>
    private bool ParseSampleField(ref Utf8JsonReader reader, ref Slot slot)
    {
        if (reader.ValueTextEquals("value"u8))
        {
            reader.Read();
            slot.HasValue = true;
            if (reader.TokenType == JsonTokenType.Number)
            {
                // A number such as 1e400 overflows to infinity: some runtimes refuse it, others return it.
                slot.ValueFlaw = reader.TryGetDouble(out slot.Value) && double.IsFinite(slot.Value) ? Flaw.None : Flaw.ValueNotFinite;
            }
            else if (reader.TokenType == JsonTokenType.String)
            {
                slot.ValueFlaw = IsNonFiniteName(ref reader) ? Flaw.ValueNotFinite : Flaw.ValueNotNumber;
            }
            else
            {
                slot.ValueFlaw = Flaw.ValueNotNumber;
                SkipValue(ref reader);
            }

            return true;
        }

        if (reader.ValueTextEquals("sensor"u8))
        {
            reader.Read();
            if (reader.TokenType == JsonTokenType.String)
            {
                slot.SensorToken = (int)reader.TokenStartIndex;
                slot.SensorFlaw = LookUpSensor(ref reader, out slot.SensorIndex) ? Flaw.None : Flaw.SensorUnknown;
            }
            else
            {
                slot.SensorFlaw = Flaw.SensorNotString;
                slot.SensorToken = -1;
                SkipValue(ref reader);
            }

            slot.HasSensor = true;
            return true;
        }

        if (reader.ValueTextEquals("unit"u8))
        {
            reader.Read();
            slot.HasUnit = true;
            if (reader.TokenType == JsonTokenType.String)
            {
                slot.UnitToken = (int)reader.TokenStartIndex;
                slot.UnitFlaw = Flaw.None;
            }
            else
            {
                slot.UnitFlaw = Flaw.UnitNotString;
                SkipValue(ref reader);
            }

            return true;
        }

        if (reader.ValueTextEquals("ts"u8))
        {
            reader.Read();
            slot.Ts = ParseTimestamp(ref reader, out slot.TsMs);
            return true;
        }

        reader.Read();
        SkipValue(ref reader);
        return false;
    }

    /// <summary>Sensor, value and unit checks that need the whole sample object (fields come in any order).</summary>
    private void CheckFields(ref Slot slot, ReadOnlySpan<byte> payload)
    {
        if (slot.Flaw != Flaw.None)
        {
            return;
        }

        if (!slot.HasSensor)
        {
            slot.Flaw = Flaw.SensorMissing;
        }
        else if (slot.SensorFlaw != Flaw.None)
        {
            slot.Flaw = slot.SensorFlaw;
        }
        else if (!slot.HasValue)
        {
            slot.Flaw = Flaw.ValueMissing;
        }
        else if (slot.ValueFlaw != Flaw.None)
        {
            slot.Flaw = slot.ValueFlaw;
        }
        else if (!slot.HasUnit)
        {
            slot.Flaw = Flaw.UnitMissing;
        }
        else if (slot.UnitFlaw != Flaw.None)
        {
            slot.Flaw = slot.UnitFlaw;
        }
        else if (!UnitMatches(ref slot, payload))
        {
            slot.Flaw = Flaw.UnitWrong;
        }
    }

    private bool UnitMatches(ref Slot slot, ReadOnlySpan<byte> payload)
    {
        // UnitToken is the opening quote of the unit string; the common case is a plain byte match.
        var expected = _unitsUtf8[slot.SensorIndex];
        var raw = payload[(slot.UnitToken + 1)..];
        if (raw.Length > expected.Length && raw[expected.Length] == (byte)'"' && raw[..expected.Length].SequenceEqual(expected))
        {
            return true;
        }

        // Escaped text (e.g. "mV\/V") is compared unescaped by a reader over that one string.
        var reader = new Utf8JsonReader(payload[slot.UnitToken..]);
        return reader.Read() && reader.TokenType == JsonTokenType.String && reader.ValueTextEquals(expected);
    }

    private bool Check(ref Slot slot, ref MessageInfo message, long nowUnixMs, out TelemetrySample sample)
    {
        sample = default;
        if (slot.Flaw != Flaw.None)
        {
            return false;
        }

        var ts = slot.Ts;
        var tsMs = slot.TsMs;
        if (ts == TsState.Absent)
        {
            ts = message.BatchTs;
            tsMs = message.BatchTsMs;
        }

        switch (ts)
        {
            case TsState.Absent:
                slot.Flaw = Flaw.TsMissing;
                return false;
            case TsState.Invalid:
                slot.Flaw = Flaw.TsInvalid;
                return false;
        }

        if (tsMs - nowUnixMs > _maxFutureMs)
        {
            slot.Flaw = Flaw.TsFuture;
            slot.TsMs = tsMs;
            return false;
        }

        if (_maxLatenessMs > 0 && nowUnixMs - tsMs > _maxLatenessMs)
        {
            slot.Flaw = Flaw.TsOld;
            slot.TsMs = tsMs;
            return false;
        }

        if (slot.Value < _rangeMin[slot.SensorIndex] || slot.Value > _rangeMax[slot.SensorIndex])
        {
            slot.Flaw = Flaw.OutOfRange;
            return false;
        }

        sample = new TelemetrySample(_silo.Index, slot.SensorIndex, tsMs, slot.Value);
        return true;
    }

    private bool LookUpSensor(ref Utf8JsonReader reader, out int index)
    {
        index = -1;
        Span<byte> utf8 = stackalloc byte[MaxIdBytes];
        scoped ReadOnlySpan<byte> id;
        if (!reader.ValueIsEscaped)
        {
            id = reader.ValueSpan;
            if (id.Length > MaxIdBytes)
            {
                return false;
            }
        }
        else
        {
            if (reader.ValueSpan.Length > MaxIdBytes * 6)
            {
                return false;
            }

            Span<byte> unescaped = stackalloc byte[MaxIdBytes * 6];
            var length = reader.CopyString(unescaped);
            if (length > MaxIdBytes)
            {
                return false;
            }

            unescaped[..length].CopyTo(utf8);
            id = utf8[..length];
        }

        return _sensorIds.TryGet(id, out index);
    }

    private void ParsePublisher(ref Utf8JsonReader reader, ref MessageInfo message)
    {
        if (reader.TokenType != JsonTokenType.String)
        {
            message.PublisherInvalid = true;
            message.SetError(RejectReason.InvalidStructure, "\"pub\" must be a string");
            SkipValue(ref reader);
            return;
        }

        int length;
        if (!reader.ValueIsEscaped)
        {
            if (reader.ValueSpan.Length > MaxPublisherBytes)
            {
                length = -1;
            }
            else
            {
                reader.ValueSpan.CopyTo(_publisher);
                length = reader.ValueSpan.Length;
            }
        }
        else
        {
            Span<byte> unescaped = stackalloc byte[MaxPublisherBytes * 6];
            length = reader.ValueSpan.Length > unescaped.Length ? -1 : reader.CopyString(unescaped);
            if (length is >= 0 and <= MaxPublisherBytes)
            {
                unescaped[..length].CopyTo(_publisher);
            }
        }

        if (length is < 1 or > MaxPublisherBytes)
        {
            message.PublisherInvalid = true;
            message.SetError(RejectReason.InvalidStructure, Invariant($"\"pub\" must be 1-{MaxPublisherBytes} bytes"));
            return;
        }

        message.PublisherLength = length;
        message.HasPublisher = true;
    }

    private TsState ParseTimestamp(ref Utf8JsonReader reader, out long unixMs)
    {
        unixMs = 0;
        switch (reader.TokenType)
        {
            case JsonTokenType.String:
                {
                    if (reader.ValueIsEscaped)
                    {
                        return TsState.Invalid;
                    }

                    if (IsoTimestamp(reader.ValueSpan, out unixMs) is { } state)
                    {
                        return state;
                    }

                    if (!reader.TryGetDateTimeOffset(out var stamp))
                    {
                        return TsState.Invalid;
                    }

                    return EpochState(unixMs = stamp.ToUnixTimeMilliseconds());
                }

            case JsonTokenType.Number:
                if (reader.TryGetInt64(out unixMs))
                {
                    return EpochState(unixMs);
                }

                if (reader.TryGetDouble(out var ms) && ms is >= 0 and <= MaxEpochMs)
                {
                    unixMs = (long)Math.Floor(ms);
                    return TsState.Valid;
                }

                return TsState.Invalid;

            default:
                SkipValue(ref reader);
                return TsState.Invalid;
        }
    }

    /// <summary>
    /// An unescaped ISO-8601 string: its state when the shape decides it (too short or long, no
    /// offset, or the usual shape read by hand); null when the library must read it.
    /// </summary>
    private static TsState? IsoTimestamp(ReadOnlySpan<byte> raw, out long unixMs)
    {
        unixMs = 0;
        if (raw.Length is < 16 or > 40 || !HasExplicitOffset(raw))
        {
            return TsState.Invalid;
        }

        // The usual shape is read by hand (several times faster); anything else goes to the library.
        return TryParseIsoFast(raw, out unixMs) ? EpochState(unixMs) : null;
    }

    private static TsState EpochState(long unixMs) => unixMs is >= 0 and <= MaxEpochMs ? TsState.Valid : TsState.Invalid;

    /// <summary>
    /// <c>yyyy-MM-ddTHH:mm:ss[.f{1,7}](Z|±HH:mm)</c> to Unix milliseconds (fraction truncated, as
    /// <see cref="DateTimeOffset.ToUnixTimeMilliseconds"/> does); false for any other shape or an impossible date.
    /// </summary>
    internal static bool TryParseIsoFast(ReadOnlySpan<byte> s, out long unixMs)
    {
        unixMs = 0;
        if (s.Length < 20 || s[4] != '-' || s[7] != '-' || (s[10] | 0x20) != 't' || s[13] != ':' || s[16] != ':' ||
            !Digits(s, 0, 4, out var year) || !Digits(s, 5, 2, out var month) || !Digits(s, 8, 2, out var day) ||
            !Digits(s, 11, 2, out var hour) || !Digits(s, 14, 2, out var minute) || !Digits(s, 17, 2, out var second))
        {
            return false;
        }

        var i = 19;
        var millis = 0;
        if (s[i] == '.')
        {
            var digits = 0;
            for (i++; i < s.Length && (uint)(s[i] - '0') <= 9; i++, digits++)
            {
                if (digits < 3)
                {
                    millis = (millis * 10) + (s[i] - '0');
                }
            }

            if (digits is 0 or > 7)
            {
                return false;
            }

            for (; digits < 3; digits++)
            {
                millis *= 10;
            }
        }

        var offsetMinutes = 0;
        if (i == s.Length - 1 && (s[i] | 0x20) == 'z')
        {
            // UTC
        }
        else if (i == s.Length - 6 && s[i] is (byte)'+' or (byte)'-' && s[i + 3] == ':' &&
                 Digits(s, i + 1, 2, out var offsetHours) && Digits(s, i + 4, 2, out var offsetMins) &&
                 offsetHours <= 14 && offsetMins < 60)
        {
            offsetMinutes = ((offsetHours * 60) + offsetMins) * (s[i] == '+' ? 1 : -1);
        }
        else
        {
            return false;
        }

        if (year < 1 || month is < 1 or > 12 || day < 1 || day > DateTime.DaysInMonth(year, month) ||
            hour > 23 || minute > 59 || second > 59)
        {
            return false;
        }

        var days = new DateOnly(year, month, day).DayNumber - UnixEpochDayNumber;
        unixMs = ((((days * 86_400L) + (hour * 3600) + (minute * 60) + second) - (offsetMinutes * 60L)) * 1000) + millis;
        return true;
    }

    private static readonly int UnixEpochDayNumber = new DateOnly(1970, 1, 1).DayNumber;

    private static bool Digits(ReadOnlySpan<byte> s, int start, int count, out int value)
    {
        value = 0;
        for (var k = start; k < start + count; k++)
        {
            var digit = (uint)(s[k] - '0');
            if (digit > 9)
            {
                return false;
            }

            value = (value * 10) + (int)digit;
        }

        return true;
    }

    /// <summary>An ISO-8601 time without 'Z' or an offset is local time somewhere: refuse it.</summary>
    private static bool HasExplicitOffset(ReadOnlySpan<byte> raw) =>
        raw[^1] is (byte)'Z' or (byte)'z' ||
        (raw.Length >= 6 && raw[^6] is (byte)'+' or (byte)'-' && raw[^3] == (byte)':');

    private static bool IsNonFiniteName(ref Utf8JsonReader reader)
    {
        if (reader.ValueSpan.Length > 16)
        {
            return false;
        }

        Span<byte> text = stackalloc byte[16 * 6];
        var length = reader.CopyString(text);
        var value = text[..length];
        if (value.Length > 0 && value[0] is (byte)'+' or (byte)'-')
        {
            value = value[1..];
        }

        return Ascii.EqualsIgnoreCase(value, "nan"u8) || Ascii.EqualsIgnoreCase(value, "inf"u8) ||
               Ascii.EqualsIgnoreCase(value, "infinity"u8) || value.SequenceEqual("∞"u8);
    }

    private void SkipValue(ref Utf8JsonReader reader) => SkipValue(ref reader, _options.MaxDepth);

    /// <summary>Skips the value the reader is on, checking the nesting depth of everything inside it.</summary>
    private static void SkipValue(ref Utf8JsonReader reader, int maxDepth)
    {
        if (reader.TokenType is not (JsonTokenType.StartObject or JsonTokenType.StartArray))
        {
            return;
        }

        var depth = reader.CurrentDepth;
        if (depth >= maxDepth)
        {
            throw new DepthExceededException();
        }

        while (reader.Read() && reader.CurrentDepth > depth)
        {
            if (reader.TokenType is JsonTokenType.StartObject or JsonTokenType.StartArray && reader.CurrentDepth >= maxDepth)
            {
                throw new DepthExceededException();
            }
        }
    }

    private void RejectSample(ITelemetryReceiver receiver, ref Slot slot, ref MessageInfo message, string? publisher,
        ReadOnlySpan<byte> payload)
    {
        var sensorId = slot.SensorToken >= 0 ? StringAt(payload, slot.SensorToken) : null;
        var unit = slot.HasUnit && slot.UnitFlaw == Flaw.None ? StringAt(payload, slot.UnitToken) : null;
        var declared = slot.SensorIndex >= 0 ? _silo.Sensors[slot.SensorIndex].Options : null;
        var (reason, detail) = slot.Flaw switch
        {
            Flaw.NotAnObject => (RejectReason.InvalidStructure, "a sample must be a JSON object"),
            Flaw.SensorMissing => (RejectReason.MissingField, "sample has no \"sensor\""),
            Flaw.SensorNotString => (RejectReason.InvalidStructure, "\"sensor\" must be a string"),
            Flaw.SensorUnknown => (RejectReason.UnknownSensor, $"sensor '{Truncate(sensorId)}' is not defined for silo {_silo.Key}"),
            Flaw.ValueMissing => (RejectReason.MissingField, "sample has no \"value\""),
            Flaw.ValueNotNumber => (RejectReason.InvalidValue, "\"value\" must be a JSON number"),
            Flaw.ValueNotFinite => (RejectReason.NotFinite, "\"value\" is NaN or infinite"),
            Flaw.UnitMissing => (RejectReason.MissingField, "sample has no \"unit\""),
            Flaw.UnitNotString => (RejectReason.WrongUnit, "\"unit\" must be a string"),
            Flaw.UnitWrong => (RejectReason.WrongUnit, $"unit '{Truncate(unit)}' but sensor {sensorId} declares '{declared?.Unit}'"),
            Flaw.TsMissing => (RejectReason.MissingField, "neither the sample nor the message has \"ts\""),
            Flaw.TsInvalid => (RejectReason.InvalidTimestamp, "\"ts\" must be an ISO-8601 time with 'Z' or an offset, or epoch milliseconds"),
            Flaw.TsFuture => (RejectReason.TimestampInFuture, Invariant(
                $"timestamp {FormatTime(slot.TsMs)} is more than {_options.MaxFutureSkew.TotalSeconds} s ahead of the receiver's clock")),
            Flaw.TsOld => (RejectReason.TimestampTooOld, Invariant(
                $"timestamp {FormatTime(slot.TsMs)} is older than {_options.MaxLateness.TotalMinutes} min")),
            Flaw.OutOfRange => (RejectReason.OutOfRange, Invariant(
                $"value {slot.Value} {declared?.Unit} is outside the range [{declared?.RangeMin}, {declared?.RangeMax}] of sensor {sensorId}")),
            _ => (RejectReason.DecoderFault, "unclassified sample fault " + slot.Flaw),
        };

        Reject(receiver, reason, detail, sensorId, publisher, message.HasSeq ? message.Seq : null, payload, slot.Start, slot.Length);
    }

    private string? PublisherString(ref MessageInfo message) =>
        message.HasPublisher ? Encoding.UTF8.GetString(_publisher, 0, message.PublisherLength) : null;

    private void Reject(ITelemetryReceiver receiver, RejectReason reason, string detail, string? sensorId, string? publisher,
        long? seq, ReadOnlySpan<byte> payload, int start, int length)
    {
        receiver.OnRejected(new TelemetryRejection(reason, detail, _silo.SiteId, _silo.SiloId, sensorId, publisher, seq,
            Fragment(payload, start, length)));
    }

    /// <summary>The JSON of a rejected part, cut at a UTF-8 character boundary.</summary>
    internal static string Fragment(ReadOnlySpan<byte> payload, int start, int length)
    {
        start = Math.Clamp(start, 0, payload.Length);
        length = Math.Clamp(length, 0, payload.Length - start);
        var part = payload.Slice(start, length);
        if (part.Length > TelemetryRejection.MaxFragmentBytes)
        {
            var cut = TelemetryRejection.MaxFragmentBytes;
            while (cut > 0 && (part[cut] & 0xC0) == 0x80)
            {
                cut--;
            }

            part = part[..cut];
        }

        return Encoding.UTF8.GetString(part);
    }

    /// <summary>The string token starting at <paramref name="quote"/> (rejection path only).</summary>
    private static string? StringAt(ReadOnlySpan<byte> payload, int quote)
    {
        if (quote < 0 || quote >= payload.Length)
        {
            return null;
        }

        var reader = new Utf8JsonReader(payload[quote..]);
        if (!reader.Read() || reader.TokenType != JsonTokenType.String)
        {
            return null;
        }

        if (!reader.ValueIsEscaped)
        {
            return Encoding.UTF8.GetString(reader.ValueSpan);
        }

        try
        {
            return reader.GetString();
        }
        catch (InvalidOperationException)
        {
            return Encoding.UTF8.GetString(reader.ValueSpan);
        }
    }

    private static string? Truncate(string? text) => text is { Length: > 64 } ? text[..64] + "…" : text;

    private static string FormatTime(long unixMs) =>
        DateTimeOffset.FromUnixTimeMilliseconds(unixMs).ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture);

    private static string Invariant(FormattableString text) => FormattableString.Invariant(text);

    private enum TsState : byte
    {
        Absent,
        Valid,
        Invalid,
    }

    private enum Flaw : byte
    {
        None,
        NotAnObject,
        SensorMissing,
        SensorNotString,
        SensorUnknown,
        ValueMissing,
        ValueNotNumber,
        ValueNotFinite,
        UnitMissing,
        UnitNotString,
        UnitWrong,
        TsMissing,
        TsInvalid,
        TsFuture,
        TsOld,
        OutOfRange,
    }

    /// <summary>One sample as read, checked once the whole message is known (batch ts and seq may come last).</summary>
    private struct Slot
    {
        public int Start;
        public int Length;
        public int SensorIndex;
        public int SensorToken;
        public int UnitToken;
        public double Value;
        public long TsMs;
        public TsState Ts;
        public Flaw Flaw;
        public Flaw SensorFlaw;
        public Flaw ValueFlaw;
        public Flaw UnitFlaw;
        public bool HasSensor;
        public bool HasValue;
        public bool HasUnit;

        public static Slot Empty(int start) => new() { Start = start, SensorIndex = -1, SensorToken = -1, UnitToken = -1 };
    }

    private struct MessageInfo
    {
        public long Seq;
        public bool HasSeq;
        public bool HasPublisher;
        public bool PublisherInvalid;
        public int PublisherLength;
        public bool IsBatch;
        public int SampleCount;
        public TsState BatchTs;
        public long BatchTsMs;
        public RejectReason? ErrorReason;
        public string? ErrorDetail;

        /// <summary>Keeps the first structural error; a JSON-level error (forced) replaces it.</summary>
        public void SetError(RejectReason reason, string detail, bool force = false)
        {
            if (ErrorReason is null || force)
            {
                ErrorReason = reason;
                ErrorDetail = detail;
            }
        }
    }

    private sealed class DepthExceededException : Exception
    {
    }
}
