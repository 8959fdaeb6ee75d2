using System.Buffers.Text;

namespace SiloWatch.Messaging;

/// <summary>
/// The fast path: the usual shape of a message read by hand, one pass over the bytes, instead of
/// token by token through <see cref="System.Text.Json.Utf8JsonReader"/>. It takes well-formed JSON
/// whose strings are printable ASCII without escapes, whose known fields appear at most once with
/// the usual types (pub a string, seq and epoch ts plain integers, an ISO ts the hand parser
/// reads, sensor and unit strings, value a number), whose other fields hold scalars, and whose
/// batches stay within MaxSamplesPerMessage. On anything else it gives up before anything is
/// delivered, and the general path reads the message from the start: so every rejection, with its
/// reason and detail, still comes from the general path's rules or from the checks both share
/// (<see cref="CheckFields"/>, <see cref="Check"/>). The state it leaves (message, slots) is
/// the state the general path would leave for the same payload; a test compares the two on many
/// generated payloads.
/// </summary>
public sealed partial class TelemetryDecoder
{
    private const ulong MaxExactMantissa = 1UL << 53;

    // Powers of ten a double holds exactly (10^22 is the largest).
    private static readonly double[] ExactPowersOfTen =
    [
        1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
        1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
    ];

    /// <summary>Messages read by the fast path since this decoder was made (the rest took the general path).</summary>
    internal long FastPathMessages { get; private set; }

    /// <summary>Off: every message takes the general path (for the tests that compare the two).</summary>
    internal bool FastPathEnabled { get; set; } = true;

    [Flags]
    private enum Field
    {
        None = 0,
        Pub = 1,
        Seq = 2,
        Ts = 4,
        Samples = 8,
        Sensor = 16,
        Value = 32,
        Unit = 64,
        Other = 128,
    }

    /// <returns>False to hand the message to the general path (nothing has been delivered or tracked).</returns>
    private bool TryParseFast(ReadOnlySpan<byte> p, ref MessageInfo message)
    {
        var i = SkipSpace(p, 0);
        if (i >= p.Length || p[i] != '{')
        {
            return false;
        }

        ref var root = ref _root;
        root = Slot.Empty(0);
        root.Length = p.Length;
        if (!TryReadMembers(p, ref i, ref root, ref message, isRoot: true, out var seen))
        {
            return false;
        }

        // A batch with sample fields at its top level is a structural error: the general path words it.
        if (SkipSpace(p, i) != p.Length || ((seen & Field.Samples) != 0 && (seen & (Field.Sensor | Field.Value | Field.Unit)) != 0))
        {
            return false;
        }

        root.Ts = message.BatchTs;
        root.TsMs = message.BatchTsMs;
        message.IsBatch = (seen & Field.Samples) != 0;
        FastPathMessages++;
        return true;
    }

    private bool TryReadSamples(ReadOnlySpan<byte> p, ref int i, ref MessageInfo message)
    {
        if (i >= p.Length || p[i] != '[')
        {
            return false;
        }

        var count = 0;
        i = SkipSpace(p, i + 1);
        if (i < p.Length && p[i] == ']')
        {
            i++;
            message.SampleCount = 0;
            return true;
        }

        while (true)
        {
            if (++count > _options.MaxSamplesPerMessage)
            {
                return false;
            }

            if (count > _slots.Length)
            {
                Array.Resize(ref _slots, Math.Min(_slots.Length * 2, _options.MaxSamplesPerMessage));
            }

            ref var slot = ref _slots[count - 1];
            if (!TryReadSample(p, ref i, ref slot, ref message) || !TryReadSeparator(p, ref i, (byte)']', out var end))
            {
                return false;
            }

            if (end)
            {
                message.SampleCount = count;
                return true;
            }
        }
    }

    private bool TryReadSample(ReadOnlySpan<byte> p, ref int i, ref Slot slot, ref MessageInfo message)
    {
        if (i >= p.Length || p[i] != '{')
        {
            return false;
        }

        slot = Slot.Empty(i);
        if (!TryReadMembers(p, ref i, ref slot, ref message, isRoot: false, out _))
        {
            return false;
        }

        slot.Length = i - slot.Start;
        CheckFields(ref slot, p);
        return true;
    }

    /// <summary>
    /// The members of the object whose '{' the position is on, through its '}'. At the root the
    /// message fields go to <paramref name="message"/> and the sample fields (single-sample form) to
    /// <paramref name="slot"/>; inside a sample pub, seq and samples mean nothing and are skipped as
    /// any other field. False for a known field given twice (the general path decides which counts).
    /// </summary>
    private bool TryReadMembers(ReadOnlySpan<byte> p, ref int i, ref Slot slot, ref MessageInfo message, bool isRoot, out Field seen)
    {
        seen = Field.None;
        i = SkipSpace(p, i + 1);
        if (i < p.Length && p[i] == '}')
        {
            i++;
            return true;
        }

        while (true)
        {
            if (!TryReadName(p, ref i, out var field))
            {
                return false;
            }

            field = !isRoot && field is Field.Pub or Field.Seq or Field.Samples ? Field.Other : field;
            if (field != Field.Other && (seen & field) != 0)
            {
                return false;
            }

            seen |= field;
            var read = field switch
            {
                Field.Samples => TryReadSamples(p, ref i, ref message),
                Field.Pub => TryReadPublisher(p, ref i, ref message),
                Field.Seq => TryReadSeq(p, ref i, ref message),
                Field.Ts when isRoot => TryReadTimestamp(p, ref i, out message.BatchTs, out message.BatchTsMs),
                _ => TryReadSampleField(p, ref i, field, ref slot),
            };
            if (!read || !TryReadSeparator(p, ref i, (byte)'}', out var end))
            {
                return false;
            }

            if (end)
            {
                return true;
            }
        }
    }

    private bool TryReadSampleField(ReadOnlySpan<byte> p, ref int i, Field field, ref Slot slot)
    {
        switch (field)
        {
            case Field.Value:
                if (!TryReadNumber(p, ref i, out slot.Value))
                {
                    return false;
                }

                slot.HasValue = true;
                slot.ValueFlaw = double.IsFinite(slot.Value) ? Flaw.None : Flaw.ValueNotFinite;
                return true;

            case Field.Sensor:
                slot.SensorToken = i;
                if (!TryReadString(p, ref i, out var id))
                {
                    return false;
                }

                slot.HasSensor = true;
                slot.SensorFlaw = id.Length <= MaxIdBytes && _sensorIds.TryGet(id, out slot.SensorIndex) ? Flaw.None : Flaw.SensorUnknown;
                return true;

            case Field.Unit:
                slot.UnitToken = i;
                if (!TryReadString(p, ref i, out _))
                {
                    return false;
                }

                slot.HasUnit = true;
                slot.UnitFlaw = Flaw.None;
                return true;

            case Field.Ts:
                return TryReadTimestamp(p, ref i, out slot.Ts, out slot.TsMs);

            case Field.Other:
                return TrySkipScalar(p, ref i);

            default:
                return false;
        }
    }

    private static bool TryReadSeq(ReadOnlySpan<byte> p, ref int i, ref MessageInfo message)
    {
        if (!TryReadInteger(p, ref i, out message.Seq))
        {
            return false;
        }

        message.HasSeq = true;
        return true;
    }

    private bool TryReadPublisher(ReadOnlySpan<byte> p, ref int i, ref MessageInfo message)
    {
        if (!TryReadString(p, ref i, out var name) || name.Length is < 1 or > MaxPublisherBytes)
        {
            return false;
        }

        name.CopyTo(_publisher);
        message.PublisherLength = name.Length;
        message.HasPublisher = true;
        return true;
    }

    private static bool TryReadTimestamp(ReadOnlySpan<byte> p, ref int i, out TsState state, out long unixMs)
    {
        state = TsState.Invalid;
        unixMs = 0;
        if (i < p.Length && p[i] == '"')
        {
            if (!TryReadString(p, ref i, out var raw) || IsoTimestamp(raw, out unixMs) is not { } iso)
            {
                return false;
            }

            state = iso;
            return true;
        }

        if (!TryReadInteger(p, ref i, out unixMs))
        {
            return false;
        }

        state = EpochState(unixMs);
        return true;
    }

    /// <summary>Reads <c>"name"</c>, the colon and the space after it; false for an escaped or non-ASCII name.</summary>
    private static bool TryReadName(ReadOnlySpan<byte> p, ref int i, out Field field)
    {
        field = Field.None;
        if (!TryReadString(p, ref i, out var name))
        {
            return false;
        }

        field = name.Length switch
        {
            2 when name.SequenceEqual("ts"u8) => Field.Ts,
            3 when name.SequenceEqual("pub"u8) => Field.Pub,
            3 when name.SequenceEqual("seq"u8) => Field.Seq,
            4 when name.SequenceEqual("unit"u8) => Field.Unit,
            5 when name.SequenceEqual("value"u8) => Field.Value,
            6 when name.SequenceEqual("sensor"u8) => Field.Sensor,
            7 when name.SequenceEqual("samples"u8) => Field.Samples,
            _ => Field.Other,
        };
        i = SkipSpace(p, i);
        if (i >= p.Length || p[i] != ':')
        {
            return false;
        }

        i = SkipSpace(p, i + 1);
        return true;
    }

    /// <summary>After a member or element: a comma (then the next one) or <paramref name="close"/>.</summary>
    private static bool TryReadSeparator(ReadOnlySpan<byte> p, ref int i, byte close, out bool end)
    {
        i = SkipSpace(p, i);
        end = false;
        if (i >= p.Length)
        {
            return false;
        }

        if (p[i] == close)
        {
            i++;
            end = true;
            return true;
        }

        if (p[i] != ',')
        {
            return false;
        }

        i = SkipSpace(p, i + 1);
        return true;
    }

    /// <summary>A string of printable ASCII without escapes; <paramref name="text"/> is its content.</summary>
    private static bool TryReadString(ReadOnlySpan<byte> p, ref int i, out ReadOnlySpan<byte> text)
    {
        text = default;
        if (i >= p.Length || p[i] != '"')
        {
            return false;
        }

        var start = i + 1;
        for (var k = start; k < p.Length; k++)
        {
            var b = p[k];
            if (b == '"')
            {
                text = p[start..k];
                i = k + 1;
                return true;
            }

            if (b is < 0x20 or > 0x7E or (byte)'\\')
            {
                return false;
            }
        }

        return false;
    }

    /// <summary>A string, a number, true, false or null (the value of a field the decoder does not use).</summary>
    private static bool TrySkipScalar(ReadOnlySpan<byte> p, ref int i)
    {
        if (i >= p.Length)
        {
            return false;
        }

        switch (p[i])
        {
            case (byte)'"':
                return TryReadString(p, ref i, out _);
            case (byte)'t':
                return TrySkipLiteral(p, ref i, "true"u8);
            case (byte)'f':
                return TrySkipLiteral(p, ref i, "false"u8);
            case (byte)'n':
                return TrySkipLiteral(p, ref i, "null"u8);
            default:
                return TryReadNumber(p, ref i, out _);
        }
    }

    private static bool TrySkipLiteral(ReadOnlySpan<byte> p, ref int i, ReadOnlySpan<byte> literal)
    {
        if (!p[i..].StartsWith(literal))
        {
            return false;
        }

        i += literal.Length;
        return true;
    }

    /// <summary>
    /// A non-negative integer in plain digits (seq, epoch ms), at most 18 of them; false for a sign,
    /// a fraction or an exponent, which the general path reads.
    /// </summary>
    private static bool TryReadInteger(ReadOnlySpan<byte> p, ref int i, out long value)
    {
        value = 0;
        var start = i;
        var k = i;
        while (k < p.Length && (uint)(p[k] - '0') <= 9)
        {
            value = (value * 10) + (p[k] - '0');
            k++;
        }

        var digits = k - start;
        if (digits is 0 or > 18 || (digits > 1 && p[start] == '0') ||
            (k < p.Length && p[k] is (byte)'.' or (byte)'e' or (byte)'E'))
        {
            return false;
        }

        i = k;
        return true;
    }

    /// <summary>
    /// A JSON number (RFC 8259 section 6) to the nearest double. Up to 2^53 in the digits and a
    /// power of ten within ±22, one multiplication or division of two exact doubles gives the
    /// correctly rounded value (the well-known exact case of decimal-to-binary conversion, common
    /// practice, no source); the rest goes through <see cref="Utf8Parser"/>, as
    /// <see cref="System.Text.Json.Utf8JsonReader.TryGetDouble"/> does. An overflow gives infinity
    /// (the caller reports it as not finite). False when the bytes are not a JSON number.
    /// </summary>
    internal static bool TryReadNumber(ReadOnlySpan<byte> p, ref int i, out double value)
    {
        value = 0;
        var start = i;
        var k = i;
        var negative = k < p.Length && p[k] == '-';
        if (negative)
        {
            k++;
        }

        ulong mantissa = 0;
        var digits = 0;
        var scale = 0;
        if (k < p.Length && p[k] == '0')
        {
            k++;
        }
        else if (k < p.Length && (uint)(p[k] - '1') <= 8)
        {
            for (; k < p.Length && (uint)(p[k] - '0') <= 9; k++, digits++)
            {
                mantissa = (mantissa * 10) + (uint)(p[k] - '0');
            }
        }
        else
        {
            return false;
        }

        if (k < p.Length && p[k] == '.')
        {
            var first = ++k;
            for (; k < p.Length && (uint)(p[k] - '0') <= 9; k++, digits++, scale--)
            {
                mantissa = (mantissa * 10) + (uint)(p[k] - '0');
            }

            if (k == first)
            {
                return false;
            }
        }

        var exponent = 0;
        if (k < p.Length && p[k] is (byte)'e' or (byte)'E')
        {
            k++;
            var negativeExponent = k < p.Length && p[k] == '-';
            if (k < p.Length && p[k] is (byte)'+' or (byte)'-')
            {
                k++;
            }

            var first = k;
            for (; k < p.Length && (uint)(p[k] - '0') <= 9; k++)
            {
                exponent = Math.Min((exponent * 10) + (p[k] - '0'), 100_000);
            }

            if (k == first)
            {
                return false;
            }

            exponent = negativeExponent ? -exponent : exponent;
        }

        i = k;
        var power = scale + exponent;
        if (digits <= 19 && mantissa <= MaxExactMantissa && power is >= -22 and <= 22)
        {
            value = power < 0 ? mantissa / ExactPowersOfTen[-power] : mantissa * ExactPowersOfTen[power];
            value = negative ? -value : value;
            return true;
        }

        // As the reader does: the scientific format when the number has an exponent.
        var number = p[start..k];
        value = Utf8Parser.TryParse(number, out double parsed, out var consumed, exponent != 0 || number.IndexOfAny((byte)'e', (byte)'E') >= 0 ? 'e' : default) &&
                consumed == number.Length ? parsed : negative ? double.NegativeInfinity : double.PositiveInfinity;
        return true;
    }

    private static int SkipSpace(ReadOnlySpan<byte> p, int i)
    {
        while (i < p.Length && p[i] is (byte)' ' or (byte)'\n' or (byte)'\r' or (byte)'\t')
        {
            i++;
        }

        return i;
    }
}
