using System.Buffers.Binary;
using System.IO.Compression;
using System.Text;
using System.Text.Json;

namespace SiloWatch.Storage;

/// <summary>What one column of a capture holds.</summary>
public enum CaptureChannelKind
{
    /// <summary>Contents mass, kg.</summary>
    Mass,

    /// <summary>Rate of change of the mass, kg/s (negative while discharging).</summary>
    Rate,

    /// <summary>A wall gauge's compensated strain, microstrain (tension positive).</summary>
    Strain,

    /// <summary>A wall gauge's temperature (its paired sensor), degC.</summary>
    Temperature,

    /// <summary>A ring's A1/A0 (first harmonic of the change over the mean load).</summary>
    RingA1Ratio,

    /// <summary>Where a ring's load rose most, degrees from the reference mark.</summary>
    RingDirection,

    /// <summary>A ring's mean membrane force (load sense), kN/m.</summary>
    RingMeanForce,
}

/// <summary>One column of a capture.</summary>
/// <param name="Name">Unique within the capture, e.g. "strain_micro:R1-000"; the CSV header.</param>
/// <param name="Sensor">The sensor for gauge channels, else "".</param>
/// <param name="Ring">The ring for gauge and ring channels, else "".</param>
/// <param name="AngleDeg">The gauge's angle from the reference mark (NaN for other channels).</param>
public sealed record CaptureChannel(string Name, CaptureChannelKind Kind, string Unit, string Sensor = "", string Ring = "", double AngleDeg = double.NaN);

/// <summary>The silo's series at one moment: one value per channel (NaN when unknown), stored as float32.</summary>
public sealed record CaptureFrame(long TimestampMs, float[] Values);

/// <summary>
/// A downsampled record of a silo's series around a discharge, kept in the journal so that review never
/// needs the time-series store.
/// </summary>
/// <param name="IntervalMs">Spacing of the frames as captured (after any decimation: the capture interval times 2^k).</param>
/// <param name="Decimations">How many times the capture was halved to stay within its cap.</param>
public sealed record EventCapture(string SiteId, string SiloId, long IntervalMs, int Decimations, IReadOnlyList<CaptureChannel> Channels, IReadOnlyList<CaptureFrame> Frames)
{
    public int IndexOf(string name)
    {
        for (var i = 0; i < Channels.Count; i++)
        {
            if (Channels[i].Name == name)
            {
                return i;
            }
        }

        return -1;
    }

    /// <summary>The values of one channel over time (NaN where unknown).</summary>
    public double[] Column(int channel)
    {
        var values = new double[Frames.Count];
        for (var f = 0; f < values.Length; f++)
        {
            values[f] = Frames[f].Values[channel];
        }

        return values;
    }

    /// <summary>The frame nearest to a moment, or null when there are none.</summary>
    public CaptureFrame? Nearest(long ms)
    {
        CaptureFrame? best = null;
        foreach (var f in Frames)
        {
            if (best is null || Math.Abs(f.TimestampMs - ms) < Math.Abs(best.TimestampMs - ms))
            {
                best = f;
            }
        }

        return best;
    }
}

/// <summary>
/// The stored form of a capture: a JSON header (silo, interval, channels) and a column-major table of
/// time offsets (int32 ms from the first frame) and float32 values, little-endian, zlib-compressed.
/// Column-major puts each slowly changing series together, which the compressor likes.
/// </summary>
public static class EventCaptureCodec
{
    public const int Format = 1;

    private static readonly byte[] Magic = "SWC1"u8.ToArray();

    public static byte[] Encode(EventCapture capture)
    {
        ArgumentNullException.ThrowIfNull(capture);
        var header = JsonSerializer.SerializeToUtf8Bytes(new Header(capture.SiteId, capture.SiloId, capture.IntervalMs, capture.Decimations,
            capture.Frames.Count, capture.Frames.Count > 0 ? capture.Frames[0].TimestampMs : 0, [.. capture.Channels.Select(ChannelHeader.From)]), DischargeEventDetails.Json);
        using var output = new MemoryStream();
        output.Write(Magic);
        using (var z = new ZLibStream(output, CompressionLevel.Optimal, leaveOpen: true))
        {
            Span<byte> word = stackalloc byte[4];
            BinaryPrimitives.WriteInt32LittleEndian(word, header.Length);
            z.Write(word);
            z.Write(header);
            var t0 = capture.Frames.Count > 0 ? capture.Frames[0].TimestampMs : 0;
            foreach (var f in capture.Frames)
            {
                var offset = f.TimestampMs - t0;
                if (offset is < 0 or > int.MaxValue)
                {
                    throw new ArgumentException($"frame at {f.TimestampMs} is out of order or more than 24 days after the first", nameof(capture));
                }

                BinaryPrimitives.WriteInt32LittleEndian(word, (int)offset);
                z.Write(word);
            }

            for (var c = 0; c < capture.Channels.Count; c++)
            {
                foreach (var f in capture.Frames)
                {
                    if (f.Values.Length != capture.Channels.Count)
                    {
                        throw new ArgumentException($"frame at {f.TimestampMs} has {f.Values.Length} values for {capture.Channels.Count} channels", nameof(capture));
                    }

                    BinaryPrimitives.WriteSingleLittleEndian(word, f.Values[c]);
                    z.Write(word);
                }
            }
        }

        return output.ToArray();
    }

    /// <exception cref="InvalidDataException">Not a capture of this format, or damaged.</exception>
    public static EventCapture Decode(byte[] data)
    {
        ArgumentNullException.ThrowIfNull(data);
        if (data.Length < Magic.Length || !data.AsSpan(0, Magic.Length).SequenceEqual(Magic))
        {
            throw new InvalidDataException("not an event capture (format mark missing)");
        }

        try
        {
            using var input = new MemoryStream(data, Magic.Length, data.Length - Magic.Length);
            using var z = new ZLibStream(input, CompressionMode.Decompress);
            var word = new byte[4];
            z.ReadExactly(word);
            var length = BinaryPrimitives.ReadInt32LittleEndian(word);
            if (length is <= 0 or > 16 << 20)
            {
                throw new InvalidDataException($"capture header of {length} bytes");
            }

            var headerBytes = new byte[length];
            z.ReadExactly(headerBytes);
            var header = JsonSerializer.Deserialize<Header>(headerBytes, DischargeEventDetails.Json) ?? throw new InvalidDataException("empty capture header");
            var n = header.Frames;
            var channels = header.Channels.Select(c => c.ToChannel()).ToArray();
            var times = new long[n];
            for (var i = 0; i < n; i++)
            {
                z.ReadExactly(word);
                times[i] = header.FirstMs + BinaryPrimitives.ReadInt32LittleEndian(word);
            }

            var frames = new CaptureFrame[n];
            for (var i = 0; i < n; i++)
            {
                frames[i] = new CaptureFrame(times[i], new float[channels.Length]);
            }

            for (var c = 0; c < channels.Length; c++)
            {
                for (var i = 0; i < n; i++)
                {
                    z.ReadExactly(word);
                    frames[i].Values[c] = BinaryPrimitives.ReadSingleLittleEndian(word);
                }
            }

            return new EventCapture(header.Site, header.Silo, header.IntervalMs, header.Decimations, channels, frames);
        }
        catch (Exception ex) when (ex is EndOfStreamException or JsonException)
        {
            throw new InvalidDataException("event capture is truncated or damaged: " + ex.Message, ex);
        }
    }

    private sealed record Header(string Site, string Silo, long IntervalMs, int Decimations, int Frames, long FirstMs, ChannelHeader[] Channels);

    // NaN is not JSON: the angle of a non-gauge channel is written as null.
    private sealed record ChannelHeader(string Name, CaptureChannelKind Kind, string Unit, string Sensor, string Ring, double? AngleDeg)
    {
        public static ChannelHeader From(CaptureChannel c) => new(c.Name, c.Kind, c.Unit, c.Sensor, c.Ring, double.IsFinite(c.AngleDeg) ? c.AngleDeg : null);

        public CaptureChannel ToChannel() => new(Name, Kind, Unit, Sensor, Ring, AngleDeg ?? double.NaN);
    }
}

/// <summary>
/// Builds a capture in bounded memory: while no event runs it keeps a rolling window of the latest
/// frames (the pre-start buffer); an event takes the frames from a moment before its onset and
/// appends until it ends. When the event's frames reach the cap, neighbouring pairs are averaged into
/// one (the spacing doubles) and later frames are averaged in pairs likewise, so a long discharge
/// keeps its whole span at a coarser step. One thread only.
/// </summary>
public sealed class EventCaptureBuilder
{
    private readonly CaptureChannel[] _channels;
    private readonly long _intervalMs;
    private readonly int _maxFrames;
    private readonly CaptureFrame?[] _ring;
    private readonly List<CaptureFrame> _event = [];
    private int _ringNext;
    private int _ringCount;
    private long _lastMs = long.MinValue;
    private int _decimations;
    private CaptureFrame? _pending;
    private int _pendingCount;

    /// <param name="intervalMs">Least spacing of frames; offered frames closer than this to the last are skipped.</param>
    /// <param name="preStartMs">How far back before an onset the pre-start buffer must reach.</param>
    /// <param name="maxFrames">Cap on an event's frames (at least 16).</param>
    public EventCaptureBuilder(string siteId, string siloId, IReadOnlyList<CaptureChannel> channels, long intervalMs, long preStartMs, int maxFrames)
    {
        ArgumentNullException.ThrowIfNull(channels);
        ArgumentOutOfRangeException.ThrowIfLessThan(intervalMs, 1);
        ArgumentOutOfRangeException.ThrowIfNegative(preStartMs);
        ArgumentOutOfRangeException.ThrowIfLessThan(maxFrames, 16);
        SiteId = siteId;
        SiloId = siloId;
        _channels = [.. channels];
        _intervalMs = intervalMs;
        _maxFrames = maxFrames & ~1; // even: halving leaves no frame over
        // The onset lies before the moment the discharge is confirmed: room for a minute of that besides the window.
        _ring = new CaptureFrame?[(int)Math.Min(100_000, (preStartMs + 60_000) / intervalMs + 2)];
    }

    public string SiteId { get; }

    public string SiloId { get; }

    public IReadOnlyList<CaptureChannel> Channels => _channels;

    public bool Capturing { get; private set; }

    /// <summary>Frames held now (pre-start buffer, or the event's), for tests and diagnostics.</summary>
    public int HeldFrames => Capturing ? _event.Count + (_pending is null ? 0 : 1) : _ringCount;

    /// <summary>The frames of the event being captured so far (empty while buffering).</summary>
    public IReadOnlyList<CaptureFrame> EventFrames => _event;

    /// <summary>Capacity of the pre-start buffer, frames.</summary>
    public int PreStartCapacity => _ring.Length;

    /// <summary>Offers a frame (values in channel order, copied); returns false when it came too soon after the last and was skipped.</summary>
    public bool Offer(long tsMs, ReadOnlySpan<double> values)
    {
        if (values.Length != _channels.Length)
        {
            throw new ArgumentException($"{values.Length} values for {_channels.Length} channels", nameof(values));
        }

        if (_lastMs != long.MinValue && tsMs - _lastMs < _intervalMs)
        {
            return false;
        }

        _lastMs = tsMs;
        var stored = new float[values.Length];
        for (var i = 0; i < values.Length; i++)
        {
            stored[i] = (float)values[i];
        }

        var frame = new CaptureFrame(tsMs, stored);
        if (!Capturing)
        {
            _ring[_ringNext] = frame;
            _ringNext = (_ringNext + 1) % _ring.Length;
            _ringCount = Math.Min(_ringCount + 1, _ring.Length);
            return true;
        }

        AppendToEvent(frame);
        return true;
    }

    /// <summary>Starts an event's capture with the buffered frames from <paramref name="fromMs"/> on.</summary>
    public void Start(long fromMs)
    {
        _event.Clear();
        _pending = null;
        _pendingCount = 0;
        _decimations = 0;
        Capturing = true;
        for (var j = 0; j < _ringCount; j++)
        {
            var f = _ring[(_ringNext - _ringCount + j + _ring.Length) % _ring.Length]!;
            if (f.TimestampMs >= fromMs)
            {
                AppendToEvent(f);
            }
        }

        Array.Clear(_ring);
        _ringCount = 0;
        _ringNext = 0;
    }

    /// <summary>Ends the event's capture: the frames in [fromMs, toMs]; the builder returns to buffering.</summary>
    public EventCapture Finish(long fromMs, long toMs)
    {
        if (_pending is not null)
        {
            _event.Add(_pending);
        }

        var frames = _event.Where(f => f.TimestampMs >= fromMs && f.TimestampMs <= toMs).ToArray();
        var capture = new EventCapture(SiteId, SiloId, _intervalMs << _decimations, _decimations, _channels, frames);
        _event.Clear();
        _pending = null;
        _pendingCount = 0;
        Capturing = false;
        // The frames after the end stay useful as the next event's pre-start.
        foreach (var f in frames.Where(f => f.TimestampMs > toMs - (_ring.Length * _intervalMs)))
        {
            _ring[_ringNext] = f;
            _ringNext = (_ringNext + 1) % _ring.Length;
            _ringCount = Math.Min(_ringCount + 1, _ring.Length);
        }

        return capture;
    }

    /// <summary>Drops an event's capture (the service stops mid-event) and returns to buffering.</summary>
    public void Abandon()
    {
        _event.Clear();
        _pending = null;
        Capturing = false;
    }

    private void AppendToEvent(CaptureFrame frame)
    {
        // After k decimations, 2^k offered frames are averaged into one before they are kept.
        var group = 1 << _decimations;
        if (group > 1)
        {
            _pending = _pending is null ? frame : Merge(_pending, _pendingCount, frame);
            _pendingCount++;
            if (_pendingCount < group)
            {
                return;
            }

            frame = _pending;
            _pending = null;
            _pendingCount = 0;
        }

        _event.Add(frame);
        if (_event.Count >= _maxFrames)
        {
            for (var i = 0; i < _event.Count / 2; i++)
            {
                _event[i] = Merge(_event[2 * i], 1, _event[(2 * i) + 1]);
            }

            _event.RemoveRange(_event.Count / 2, _event.Count - (_event.Count / 2));
            _decimations++;
        }
    }

    // The running mean of `count` frames (a) and one more (b), NaN-aware: time and values averaged.
    private static CaptureFrame Merge(CaptureFrame a, int count, CaptureFrame b)
    {
        var values = new float[a.Values.Length];
        for (var i = 0; i < values.Length; i++)
        {
            var x = a.Values[i];
            var y = b.Values[i];
            values[i] = float.IsNaN(x) ? y : float.IsNaN(y) ? x : ((x * count) + y) / (count + 1);
        }

        return new CaptureFrame(a.TimestampMs + ((b.TimestampMs - a.TimestampMs) / (count + 1)), values);
    }
}
