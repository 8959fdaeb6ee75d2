using System.Buffers;
using System.Globalization;
using System.Text;
using System.Text.Json;

namespace SiloWatch.Messaging;

/// <summary>
/// The dead-letter payload on <c>{prefix}/v1/deadletter/{site}/{silo}</c>: a UTF-8 JSON object
/// <c>{"reason":"wrong-unit","detail":"…","site":"…","silo":"…","sensor":"LC1"|null,"pub":"…"|null,
/// "seq":1842|null,"fragment":"…","receivedAt":"2026-12-01T10:15:02.250Z"}</c>. The fragment is the
/// offending JSON as a string (already truncated by the decoder).
/// </summary>
public static class DeadLetterCodec
{
    private static readonly string[] ReasonNames = BuildReasonNames();

    /// <summary>The kebab-case name of a reason, e.g. <c>wrong-unit</c>, as written in dead letters and metrics.</summary>
    public static string ReasonName(RejectReason reason) =>
        (uint)reason < (uint)ReasonNames.Length ? ReasonNames[(int)reason] : ToKebabCase(reason.ToString());

    /// <summary>Parses a kebab-case reason name back; false when unknown.</summary>
    public static bool TryParseReason(string name, out RejectReason reason)
    {
        var index = Array.IndexOf(ReasonNames, name);
        reason = (RejectReason)Math.Max(index, 0);
        return index >= 0;
    }

    public static byte[] Encode(TelemetryRejection r, long receivedUnixMs)
    {
        ArgumentNullException.ThrowIfNull(r);
        var buffer = new ArrayBufferWriter<byte>(256 + r.Fragment.Length + r.Detail.Length);
        using (var writer = new Utf8JsonWriter(buffer))
        {
            writer.WriteStartObject();
            writer.WriteString("reason"u8, ReasonName(r.Reason));
            writer.WriteString("detail"u8, r.Detail);
            writer.WriteString("site"u8, r.SiteId);
            writer.WriteString("silo"u8, r.SiloId);
            WriteNullable(writer, "sensor"u8, r.SensorId);
            WriteNullable(writer, "pub"u8, r.Publisher);
            if (r.Sequence is { } seq)
            {
                writer.WriteNumber("seq"u8, seq);
            }
            else
            {
                writer.WriteNull("seq"u8);
            }

            writer.WriteString("fragment"u8, r.Fragment);
            writer.WriteString("receivedAt"u8, DateTimeOffset.FromUnixTimeMilliseconds(receivedUnixMs)
                .ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture));
            writer.WriteEndObject();
        }

        return buffer.WrittenSpan.ToArray();
    }

    private static void WriteNullable(Utf8JsonWriter writer, ReadOnlySpan<byte> name, string? value)
    {
        if (value is null)
        {
            writer.WriteNull(name);
        }
        else
        {
            writer.WriteString(name, value);
        }
    }

    private static string[] BuildReasonNames()
    {
        var values = Enum.GetValues<RejectReason>();
        var names = new string[values.Max(v => (int)v) + 1];
        foreach (var value in values)
        {
            names[(int)value] = ToKebabCase(value.ToString());
        }

        return names;
    }

    private static string ToKebabCase(string pascal)
    {
        var text = new StringBuilder(pascal.Length + 8);
        for (var i = 0; i < pascal.Length; i++)
        {
            var c = pascal[i];
            if (char.IsUpper(c) && i > 0)
            {
                text.Append('-');
            }

            text.Append(char.ToLowerInvariant(c));
        }

        return text.ToString();
    }
}
