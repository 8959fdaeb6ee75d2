using System.Globalization;
using System.Text;
using SiloWatch.Messaging.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Messaging.Tests;

/// <summary>
/// The decoder's fast path against its general path: the same payloads through a decoder with the
/// fast path and one without must deliver the same samples and the same rejections (reason, detail,
/// fragment), in the same order, with the same outcome. Bounded by count with fixed seeds.
/// </summary>
public sealed class TelemetryDecoderFastPathTests
{
    private const int Cases = 6_000;

    private static readonly string[] KnownSensors = ["LC1", "LC2", "LC3", "LC4", "SG-R1-000", "SG-R2-300", "T-R1-000", "T-R1-300"];

    [Fact]
    public void GeneratedPayloadsGiveTheSameResultOnBothPaths()
    {
        var random = new Random(20261202);
        var pair = new DecoderPair(new TelemetryDecoderOptions());
        for (var i = 0; i < Cases; i++)
        {
            pair.Compare(Encoding.UTF8.GetBytes(Message(random)), i);
        }

        // The generator mostly writes the usual shape: most of it must take the fast path, and the rest must not.
        Assert.InRange(pair.Fast.FastPathMessages, Cases / 3, Cases - (Cases / 20));
        Assert.Equal(0, pair.General.FastPathMessages);
    }

    [Fact]
    public void MutatedPayloadsGiveTheSameResultOnBothPaths()
    {
        var random = new Random(77);
        var pair = new DecoderPair(new TelemetryDecoderOptions());
        for (var i = 0; i < Cases; i++)
        {
            pair.Compare(PayloadMutator.Mutate(Encoding.UTF8.GetBytes(Message(random)), random), i);
        }

        Assert.True(pair.Fast.FastPathMessages > Cases / 40, $"only {pair.Fast.FastPathMessages} of {Cases} mutated payloads took the fast path");
    }

    [Fact]
    public void BatchesAtAndBeyondTheSampleLimitGiveTheSameResultOnBothPaths()
    {
        var random = new Random(5);
        var pair = new DecoderPair(new TelemetryDecoderOptions { MaxSamplesPerMessage = 4 });
        for (var i = 0; i < 400; i++)
        {
            pair.Compare(Encoding.UTF8.GetBytes(Message(random)), i);
        }

        Assert.True(pair.Fast.FastPathMessages > 0);
    }

    [Theory]
    [InlineData("""{"pub":"gw-load","seq":1,"samples":[{"sensor":"LC1","ts":1796120102250,"value":0.5,"unit":"mV/V"},{"sensor":"T-R1-000","ts":1796120102250,"value":10.01,"unit":"degC"}]}""")]
    [InlineData("""{"pub":"gw-east-1","seq":1842,"ts":"2026-12-01T10:15:02.250Z","sensor":"LC1","value":1.2345,"unit":"mV/V"}""")]
    [InlineData("""{"pub":"gw-east-1","seq":1843,"ts":1796120102250,"samples":[{"sensor":"SG-R1-060","ts":"2026-12-01T10:15:02.249Z","value":1.2355,"unit":"mV/V"}]}""")]
    [InlineData(" {\n  \"samples\" : [ { \"sensor\" : \"LC2\" , \"value\" : -2.5e-1 , \"unit\" : \"mV/V\" , \"q\" : null } ] ,\r\n \"ts\" : 1796120102000 }\t")]
    public void TheUsualShapesTakeTheFastPath(string json)
    {
        var decoder = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions());
        var receiver = new CollectingReceiver();

        var outcome = decoder.Decode(Encoding.UTF8.GetBytes(json), DemoPlant.NowMs, receiver);

        Assert.Equal(1, decoder.FastPathMessages);
        Assert.Empty(receiver.Rejections);
        Assert.Equal(receiver.Samples.Count, outcome.Accepted);
        Assert.NotEmpty(receiver.Samples);
    }

    [Theory]
    [InlineData("""{"sensor":"LC\u0031","value":1,"unit":"mV/V","ts":1796120102000}""")]          // an escape
    [InlineData("""{"sensor":"LC1","value":"1","unit":"mV/V","ts":1796120102000}""")]             // a value as text
    [InlineData("""{"sensor":"LC1","value":1,"value":2,"unit":"mV/V","ts":1796120102000}""")]     // a field twice
    [InlineData("""{"sensor":"LC1","value":1,"unit":"mV/V","ts":1796120102000,"meta":{"a":1}}""")] // a nested unknown field
    [InlineData("""{"sensor":"LC1","value":1,"unit":"mV/V","ts":1796120102000.5}""")]             // a fractional epoch
    [InlineData("""{"sensor":"LC1","value":1,"unit":"mV/V","ts":"2026-12-01 10:15:02Z"}""")]       // a shape for the library
    [InlineData("""{"sensor":"LC1","value":1,"unit":"mV/V","ts":1796120102000} x""")]             // not JSON after the object
    public void AnythingElseIsLeftToTheGeneralPath(string json)
    {
        var decoder = new TelemetryDecoder(DemoPlant.S1, new TelemetryDecoderOptions());

        decoder.Decode(Encoding.UTF8.GetBytes(json), DemoPlant.NowMs, new CollectingReceiver());

        Assert.Equal(0, decoder.FastPathMessages);
    }

    [Fact]
    public void NumbersAreReadAsDoubleParseReadsThem()
    {
        var random = new Random(3);
        for (var i = 0; i < 50_000; i++)
        {
            var text = Number(random);
            var bytes = Encoding.ASCII.GetBytes(text);
            var at = 0;

            Assert.True(TelemetryDecoder.TryReadNumber(bytes, ref at, out var value), text);
            Assert.Equal(bytes.Length, at);
            var expected = double.Parse(text, NumberStyles.Float, CultureInfo.InvariantCulture);
            Assert.True(BitConverter.DoubleToInt64Bits(expected) == BitConverter.DoubleToInt64Bits(value), $"{text}: {value:R}, expected {expected:R}");
        }
    }

    [Theory]
    [InlineData("-")]
    [InlineData("+1")]
    [InlineData(".5")]
    [InlineData("1.")]
    [InlineData("1e")]
    [InlineData("1e+")]
    [InlineData("-x")]
    public void TextThatIsNotAJsonNumberIsRefused(string text)
    {
        var at = 0;

        Assert.False(TelemetryDecoder.TryReadNumber(Encoding.ASCII.GetBytes(text), ref at, out _));
    }

    [Fact]
    public void TheSensorTableFindsEverySensorOfEverySiloByItsBytes()
    {
        foreach (var silo in DemoPlant.Registry.Silos)
        {
            var table = new SensorIdTable(silo.Sensors);
            foreach (var sensor in silo.Sensors)
            {
                Assert.True(table.TryGet(Encoding.UTF8.GetBytes(sensor.Id), out var index), sensor.Id);
                Assert.Equal(sensor.Index, index);
                Assert.False(table.TryGet(Encoding.UTF8.GetBytes(sensor.Id + "x"), out _));
                Assert.False(table.TryGet(Encoding.UTF8.GetBytes(sensor.Id.ToLowerInvariant()), out _));
            }

            Assert.False(table.TryGet([], out _));
            Assert.False(table.TryGet([0xC3, 0x28], out var none)); // not UTF-8
            Assert.Equal(-1, none);
        }
    }

    /// <summary>
    /// A message much like a gateway's, sometimes with fields missing or out of range; one in three
    /// (<paramref name="odd"/>) also with unusual or wrong types, escapes, shapes and fields.
    /// </summary>
    private static string Message(Random random) => Message(random, odd: random.Next(3) == 0);

    /// <summary>A number below <paramref name="n"/>; in a usual message always n - 1 (the usual choice in the switches below).</summary>
    private static int Choose(Random random, bool odd, int n) => odd ? random.Next(n) : n - 1;

    private static string Message(Random random, bool odd)
    {
        var fields = new List<string>();
        if (random.Next(5) > 0)
        {
            fields.Add($"\"pub\":{(odd ? Pick(random, "\"gw-east-1\"", "\"\"", "\"gw\\u002d1\"", "7", "\"" + new string('p', 70) + "\"") : "\"gw-east-1\"")}");
        }

        if (random.Next(5) > 0)
        {
            fields.Add($"\"seq\":{(odd ? Pick(random, Seq(random), "-3", "1.5", "\"9\"", "12345678901234567890") : Seq(random))}");
        }

        if (random.Next(4) > 0)
        {
            fields.Add($"\"ts\":{Timestamp(random, odd)}");
        }

        if (odd && random.Next(4) == 0)
        {
            fields.Add($"\"{Pick(random, "site", "fw", "q")}\":{Pick(random, "\"x\"", "1", "true", "false", "null", "[1]", "{\"a\":2}")}");
        }

        var batch = random.Next(4) > 0;
        if (batch)
        {
            var count = random.Next(10) == 0 ? 0 : random.Next(1, 12);
            var samples = Enumerable.Range(0, count).Select(_ => Sample(random, odd && random.Next(4) == 0, includeTs: random.Next(3) == 0));
            fields.Add($"\"samples\":[{string.Join(",", samples)}]");
            if (odd && random.Next(10) == 0)
            {
                fields.Add("\"sensor\":\"LC1\"");
            }
        }
        else
        {
            var sample = Sample(random, odd, includeTs: false);
            fields.Add(sample[1..^1]);
        }

        Shuffle(fields, random);
        var json = "{" + string.Join(",", fields) + "}";
        return random.Next(10) == 0 ? Spaced(json, random) : json;
    }

    private static string Sample(Random random, bool odd, bool includeTs)
    {
        var fields = new List<string>();
        var sensor = Choose(random, odd, 15) switch
        {
            0 => "LC9",
            1 => "lc1",
            2 => "LC\\u0031",
            3 => "LC\u00e91",
            4 => new string('S', 80),
            _ => Pick(random, KnownSensors),
        };
        if (random.Next(25) > 0)
        {
            fields.Add(Choose(random, odd, 10) == 0 ? "\"sensor\":5" : $"\"sensor\":\"{sensor}\"");
        }

        if (random.Next(25) > 0)
        {
            var value = Choose(random, odd, 20) switch
            {
                0 => "\"NaN\"",
                1 => "null",
                2 => "1e400",
                3 => "-1e400",
                4 or 5 => "99",
                _ => Number(random, sensible: true),
            };
            fields.Add($"\"value\":{value}");
        }

        if (random.Next(25) > 0)
        {
            var unit = sensor.StartsWith("T-", StringComparison.Ordinal) ? "degC" : "mV/V";
            unit = (odd ? random.Next(15) : Pick(random, 0, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12)) switch
            {
                0 => "V",
                1 => "mV\\/V",
                2 => "degC",
                _ => unit,
            };
            fields.Add(Choose(random, odd, 10) == 0 ? "\"unit\":1" : $"\"unit\":\"{unit}\"");
        }

        if (includeTs)
        {
            fields.Add($"\"ts\":{Timestamp(random, odd)}");
        }

        if (Choose(random, odd, 5) == 0)
        {
            fields.Add($"\"{Pick(random, "q", "seq", "pub", "samples", "value")}\":{Pick(random, "0", "\"good\"", "null", "[]", "2.5")}");
        }

        Shuffle(fields, random);
        return "{" + string.Join(",", fields) + "}";
    }

    private static string Timestamp(Random random, bool odd)
    {
        var at = DemoPlant.Now.AddMilliseconds(-random.Next(0, 7_200_000) + random.Next(0, 60_000));
        return (odd ? random.Next(16) : Pick(random, 0, 1, 2, 5, 8, 11, 12, 13, 14, 15)) switch
        {
            0 => "\"" + at.ToString("yyyy-MM-dd'T'HH:mm:ss", CultureInfo.InvariantCulture) + "\"",   // no offset
            1 => "\"" + at.ToString("yyyy-MM-dd'T'HH:mm:ss.fffffffzzz", CultureInfo.InvariantCulture) + "\"",
            2 => "\"" + at.ToOffset(TimeSpan.FromHours(-5)).ToString("yyyy-MM-dd'T'HH:mm:sszzz", CultureInfo.InvariantCulture) + "\"",
            3 => "\"2026-02-30T10:00:00Z\"",
            4 => "\"2026-12-01 10:15:02Z\"",
            5 => "\"2026-12-01t10:15:02.5z\"",
            6 => (at.ToUnixTimeMilliseconds() + 0.5).ToString(CultureInfo.InvariantCulture),
            7 => "-5",
            8 => "\"soon\"",
            9 => "null",
            10 => "\"2026-12-01T10:15:02\\u002e250Z\"",
            11 => "\"" + at.ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture) + "\"",
            _ => at.ToUnixTimeMilliseconds().ToString(CultureInfo.InvariantCulture),
        };
    }

    private static string Seq(Random random) => random.Next(1, 40).ToString(CultureInfo.InvariantCulture);

    /// <summary>A JSON number: plain, fractional or with an exponent, now and then with many digits or far out of the exact range.</summary>
    private static string Number(Random random, bool sensible = false)
    {
        var sb = new StringBuilder();
        if (random.Next(3) == 0)
        {
            sb.Append('-');
        }

        var intDigits = random.Next(8) == 0 ? random.Next(10, 25) : random.Next(1, 4);
        sb.Append(random.Next(6) == 0 ? '0' : (char)('1' + random.Next(9)));
        if (sb[^1] != '0')
        {
            for (var k = 1; k < intDigits; k++)
            {
                sb.Append((char)('0' + random.Next(10)));
            }
        }

        if (random.Next(3) > 0)
        {
            sb.Append('.');
            var fraction = random.Next(8) == 0 ? random.Next(10, 30) : random.Next(1, 7);
            for (var k = 0; k < fraction; k++)
            {
                sb.Append((char)('0' + random.Next(10)));
            }
        }

        if (random.Next(sensible ? 10 : 3) == 0)
        {
            sb.Append(random.Next(2) == 0 ? 'e' : 'E');
            sb.Append(Pick(random, "", "+", "-"));
            sb.Append((sensible ? random.Next(0, 5) : random.Next(0, 400)).ToString(CultureInfo.InvariantCulture));
        }

        return sb.ToString();
    }

    private static string Spaced(string json, Random random)
    {
        var sb = new StringBuilder();
        var inString = false;
        foreach (var c in json)
        {
            if (c == '"' && (sb.Length == 0 || sb[^1] != '\\'))
            {
                inString = !inString;
            }

            sb.Append(c);
            if (!inString && c is '{' or '[' or ',' or ':' && random.Next(2) == 0)
            {
                sb.Append(Pick(random, " ", "\n  ", "\t", "\r\n"));
            }
        }

        return sb.ToString();
    }

    private static T Pick<T>(Random random, params T[] choices) => choices[random.Next(choices.Length)];

    private static void Shuffle<T>(List<T> items, Random random)
    {
        for (var i = items.Count - 1; i > 0; i--)
        {
            var j = random.Next(i + 1);
            (items[i], items[j]) = (items[j], items[i]);
        }
    }

    /// <summary>Two decoders of silo S1, one with the fast path and one without, fed the same payloads.</summary>
    private sealed class DecoderPair(TelemetryDecoderOptions options)
    {
        private readonly CollectingReceiver _fastReceiver = new();
        private readonly CollectingReceiver _generalReceiver = new();

        public TelemetryDecoder Fast { get; } = new(DemoPlant.S1, options);

        public TelemetryDecoder General { get; } = new(DemoPlant.S1, options) { FastPathEnabled = false };

        public void Compare(byte[] payload, int caseNumber)
        {
            _fastReceiver.Clear();
            _generalReceiver.Clear();
            var fast = Fast.Decode(payload, DemoPlant.NowMs, _fastReceiver);
            var general = General.Decode(payload, DemoPlant.NowMs, _generalReceiver);
            var text = Encoding.UTF8.GetString(payload);

            Assert.True(general == fast, $"case {caseNumber}: outcome {fast} on the fast path, {general} on the general path\n{text}");
            Assert.True(_generalReceiver.Samples.Select(Bits).SequenceEqual(_fastReceiver.Samples.Select(Bits)),
                $"case {caseNumber}: samples differ\n{text}");
            Assert.True(_generalReceiver.Rejections.SequenceEqual(_fastReceiver.Rejections),
                $"case {caseNumber}: rejections differ\nfast: {string.Join(" | ", _fastReceiver.Rejections)}\ngeneral: {string.Join(" | ", _generalReceiver.Rejections)}\n{text}");
        }

        private static (int, int, long, long) Bits(TelemetrySample s) =>
            (s.SiloIndex, s.SensorIndex, s.TimestampMs, BitConverter.DoubleToInt64Bits(s.Value));
    }
}
