using System.Buffers;
using System.Globalization;
using System.Text;

namespace SiloWatch.Storage;

/// <summary>
/// InfluxDB line protocol, numbers only: "measurement,tag=v field=1.5,other=2 1700000000000"
/// with millisecond timestamps. Measurements escape commas and spaces; tag keys, tag values and
/// field keys escape commas, equals signs and spaces.
/// </summary>
public static class LineProtocol
{
    internal static readonly SearchValues<char> MeasurementSpecials = SearchValues.Create(", ");
    internal static readonly SearchValues<char> KeySpecials = SearchValues.Create(",= ");

    /// <summary>Escapes a measurement name.</summary>
    public static string EscapeMeasurement(string name) => Escape(name, MeasurementSpecials);

    /// <summary>Escapes a tag key, tag value or field key.</summary>
    public static string EscapeKey(string name) => Escape(name, KeySpecials);

    internal static string Escape(string s, SearchValues<char> specials)
    {
        if (s.AsSpan().IndexOfAny(specials) < 0)
        {
            return s;
        }

        var sb = new StringBuilder(s.Length + 4);
        AppendEscaped(sb, s, specials);
        return sb.ToString();
    }

    internal static int EscapedLength(string s, SearchValues<char> specials)
    {
        var n = s.Length;
        foreach (var c in s)
        {
            if (specials.Contains(c))
            {
                n++;
            }
        }

        return n;
    }

    internal static void AppendEscaped(StringBuilder sb, string s, SearchValues<char> specials)
    {
        foreach (var c in s)
        {
            if (specials.Contains(c))
            {
                sb.Append('\\');
            }

            sb.Append(c);
        }
    }

    /// <summary>
    /// Rejects what line protocol cannot carry unambiguously: empty names, control characters
    /// (a newline ends a line) and backslashes (their meaning depends on what follows).
    /// </summary>
    internal static void CheckName(string s, string what)
    {
        if (string.IsNullOrEmpty(s))
        {
            throw new ArgumentException($"{what} must not be empty");
        }

        foreach (var c in s)
        {
            if (char.IsControl(c) || c == '\\')
            {
                throw new ArgumentException($"{what} '{s.ReplaceLineEndings(" ")}' holds a control character or a backslash, which line protocol cannot carry");
            }
        }
    }

    internal static void CheckNotReserved(string s, string what)
    {
        if (s[0] == '_' || s == "time")
        {
            throw new ArgumentException($"{what} '{s}' is reserved by InfluxDB (names starting with '_' and 'time')");
        }
    }

    /// <summary>
    /// Appends one line (no newline) for a point; fields whose value is NaN or infinite are left out,
    /// as line protocol has no representation for them. Returns false, appending nothing, when no
    /// field is finite.
    /// </summary>
    internal static bool AppendLine(TextBuffer buffer, SeriesKey series, long timestampMs, ReadOnlySpan<double> values)
    {
        var start = buffer.Length;
        buffer.Append(series.LinePrefix);
        var any = false;
        var keys = series.EscapedFieldKeys;
        for (var i = 0; i < values.Length; i++)
        {
            var v = values[i];
            if (!double.IsFinite(v))
            {
                continue;
            }

            if (any)
            {
                buffer.Append(',');
            }

            buffer.Append(keys[i]);
            buffer.Append(v);
            any = true;
        }

        if (!any)
        {
            buffer.Length = start;
            return false;
        }

        buffer.Append(' ');
        buffer.Append(timestampMs);
        return true;
    }

    /// <summary>Formats one point as a line, or null when no field is finite.</summary>
    public static string? FormatLine(SeriesKey series, long timestampMs, ReadOnlySpan<double> values)
    {
        ArgumentNullException.ThrowIfNull(series);
        var buffer = new TextBuffer(128);
        return AppendLine(buffer, series, timestampMs, values) ? buffer.ToString() : null;
    }
}

/// <summary>A growable char buffer reused across batches, so formatting allocates one string per batch.</summary>
internal sealed class TextBuffer(int initialCapacity = 4096)
{
    private char[] _chars = new char[initialCapacity];
    private int _length;

    public int Length
    {
        get => _length;
        set => _length = value;
    }

    public ReadOnlySpan<char> Span => _chars.AsSpan(0, _length);

    public void Append(char c)
    {
        Ensure(1);
        _chars[_length++] = c;
    }

    public void Append(string s)
    {
        Ensure(s.Length);
        s.CopyTo(_chars.AsSpan(_length));
        _length += s.Length;
    }

    public void Append(double v)
    {
        Ensure(32);
        // Shortest round-trip form, invariant culture: what was computed is what is stored.
        if (!v.TryFormat(_chars.AsSpan(_length), out var written, default, CultureInfo.InvariantCulture))
        {
            throw new InvalidOperationException("a double did not fit 32 characters");
        }

        _length += written;
    }

    public void Append(long v)
    {
        Ensure(20);
        v.TryFormat(_chars.AsSpan(_length), out var written, default, CultureInfo.InvariantCulture);
        _length += written;
    }

    public void Clear() => _length = 0;

    public override string ToString() => new(_chars, 0, _length);

    private void Ensure(int more)
    {
        if (_length + more > _chars.Length)
        {
            Array.Resize(ref _chars, Math.Max(_chars.Length * 2, _length + more));
        }
    }
}

/// <summary>Reads back what <see cref="SeriesKey.EscapedTagSet"/> wrote.</summary>
internal static class TagSetParser
{
    public static List<KeyValuePair<string, string>> Parse(string escaped)
    {
        var result = new List<KeyValuePair<string, string>>();
        if (escaped.Length == 0)
        {
            return result;
        }

        var key = new System.Text.StringBuilder();
        var value = new System.Text.StringBuilder();
        var current = key;
        for (var i = 0; i < escaped.Length; i++)
        {
            var c = escaped[i];
            if (c == '\\' && i + 1 < escaped.Length)
            {
                current.Append(escaped[++i]);
            }
            else if (c == '=' && current == key)
            {
                current = value;
            }
            else if (c == ',')
            {
                result.Add(new(key.ToString(), value.ToString()));
                key.Clear();
                value.Clear();
                current = key;
            }
            else
            {
                current.Append(c);
            }
        }

        result.Add(new(key.ToString(), value.ToString()));
        return result;
    }
}
