namespace SiloWatch.Storage;

/// <summary>
/// The schema of one series, made once and reused for every point: measurement, tag set (sorted by
/// key, escaped once for InfluxDB line protocol) and the names of its numeric fields. Points refer
/// to it by reference; two keys are equal only if they are the same object.
/// </summary>
public sealed class SeriesKey
{
    // Field sets are few (one per measurement and downsampling rule) and series many (tens per silo): the
    // field names and their escaped keys are held once per set, not once per series.
    private static readonly System.Collections.Concurrent.ConcurrentDictionary<string, (string[] Names, string[] EscapedKeys)> s_fieldSets = new(StringComparer.Ordinal);
    private static int s_nextId;

    /// <exception cref="ArgumentException">A name or tag value is empty, reserved, duplicated or holds a character line protocol cannot carry.</exception>
    public SeriesKey(string measurement, IEnumerable<KeyValuePair<string, string>> tags, IEnumerable<string> fieldNames)
    {
        ArgumentNullException.ThrowIfNull(measurement);
        ArgumentNullException.ThrowIfNull(tags);
        ArgumentNullException.ThrowIfNull(fieldNames);
        LineProtocol.CheckName(measurement, "measurement");
        if (measurement[0] == '#')
        {
            // A line starting with '#' is a comment in line protocol.
            throw new ArgumentException($"measurement '{measurement}' must not start with '#'", nameof(measurement));
        }

        var sortedTags = tags.OrderBy(t => t.Key, StringComparer.Ordinal).ToArray();
        for (var i = 0; i < sortedTags.Length; i++)
        {
            LineProtocol.CheckName(sortedTags[i].Key, "tag key");
            LineProtocol.CheckName(sortedTags[i].Value, $"value of tag '{sortedTags[i].Key}'");
            LineProtocol.CheckNotReserved(sortedTags[i].Key, "tag key");
            if (i > 0 && sortedTags[i].Key == sortedTags[i - 1].Key)
            {
                throw new ArgumentException($"tag '{sortedTags[i].Key}' is given twice", nameof(tags));
            }
        }

        var fields = fieldNames.ToArray();
        if (fields.Length == 0)
        {
            throw new ArgumentException("a series needs at least one field", nameof(fieldNames));
        }

        foreach (var field in fields)
        {
            LineProtocol.CheckName(field, "field name");
            LineProtocol.CheckNotReserved(field, "field name");
        }

        if (fields.Distinct(StringComparer.Ordinal).Count() != fields.Length)
        {
            throw new ArgumentException($"field names of '{measurement}' must be unique", nameof(fieldNames));
        }

        var fieldSet = s_fieldSets.GetOrAdd(string.Join('\n', fields), static (_, f) =>
            ([.. f.Select(string.Intern)], [.. f.Select(n => string.Intern(LineProtocol.Escape(n, LineProtocol.KeySpecials) + "="))]), fields);
        Measurement = measurement;
        Tags = sortedTags;
        FieldNames = fieldSet.Names;
        EscapedFieldKeys = fieldSet.EscapedKeys;
        Id = Interlocked.Increment(ref s_nextId);

        var prefix = new System.Text.StringBuilder();
        LineProtocol.AppendEscaped(prefix, measurement, LineProtocol.MeasurementSpecials);
        foreach (var (key, value) in sortedTags)
        {
            prefix.Append(',');
            LineProtocol.AppendEscaped(prefix, key, LineProtocol.KeySpecials);
            prefix.Append('=');
            LineProtocol.AppendEscaped(prefix, value, LineProtocol.KeySpecials);
        }

        prefix.Append(' ');
        LinePrefix = prefix.ToString();
    }

    public SeriesKey(string measurement, IEnumerable<KeyValuePair<string, string>> tags, params string[] fieldNames)
        : this(measurement, tags, (IEnumerable<string>)fieldNames)
    {
    }

    public string Measurement { get; }

    /// <summary>Tags sorted by key (ordinal), unescaped.</summary>
    public IReadOnlyList<KeyValuePair<string, string>> Tags { get; }

    public IReadOnlyList<string> FieldNames { get; }

    /// <summary>"measurement,k1=v1,k2=v2 " escaped for line protocol, with the trailing space.</summary>
    public string LinePrefix { get; }

    /// <summary>"k1=v1,k2=v2" escaped, "" without tags: the canonical tag set (cut from <see cref="LinePrefix"/> when asked; it is asked once per series).</summary>
    public string EscapedTagSet => Tags.Count == 0
        ? ""
        : LinePrefix[(LineProtocol.EscapedLength(Measurement, LineProtocol.MeasurementSpecials) + 1)..^1];

    /// <summary>Process-unique number of this key (for caches).</summary>
    internal int Id { get; }

    /// <summary>"field=" escaped, one per field.</summary>
    internal string[] EscapedFieldKeys { get; }

    public string? GetTag(string key)
    {
        foreach (var (k, v) in Tags)
        {
            if (k == key)
            {
                return v;
            }
        }

        return null;
    }

    public override string ToString() => LinePrefix.TrimEnd() + " [" + string.Join(',', FieldNames) + "]";
}
