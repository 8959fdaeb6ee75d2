using System.Globalization;
using System.Text.Json;
using CsvHelper;
using CsvHelper.Configuration;
using SiloWatch.Storage;

namespace SiloWatch.Review;

/// <summary>
/// An event's capture as CSV (one row per frame: time, then one column per channel, empty where unknown)
/// or JSON (the event record, its details and the capture's channels and frames). Both report progress
/// per frame written, for the caller to show on stderr.
/// </summary>
public static class CaptureExport
{
    private static readonly JsonWriterOptions Indented = new() { Indented = true };

    private static readonly CsvConfiguration CsvFormat = new(CultureInfo.InvariantCulture) { NewLine = "\n" };

    /// <summary>Writes the CSV; the header names each channel with its unit ("strain_micro:R1-000 [microstrain]").</summary>
    public static void WriteCsv(EventCapture capture, TextWriter output, IProgress<int>? progress = null)
    {
        ArgumentNullException.ThrowIfNull(capture);
        ArgumentNullException.ThrowIfNull(output);
        using var csv = new CsvWriter(output, CsvFormat, leaveOpen: true);
        csv.WriteField("time_utc");
        csv.WriteField("seconds_from_first");
        foreach (var c in capture.Channels)
        {
            csv.WriteField($"{c.Name} [{c.Unit}]");
        }

        csv.NextRecord();
        var t0 = capture.Frames.Count > 0 ? capture.Frames[0].TimestampMs : 0;
        for (var i = 0; i < capture.Frames.Count; i++)
        {
            var f = capture.Frames[i];
            csv.WriteField(DateTimeOffset.FromUnixTimeMilliseconds(f.TimestampMs).ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture));
            csv.WriteField(((f.TimestampMs - t0) / 1000.0).ToString("0.###", CultureInfo.InvariantCulture));
            foreach (var v in f.Values)
            {
                csv.WriteField(float.IsFinite(v) ? v.ToString("R", CultureInfo.InvariantCulture) : "");
            }

            csv.NextRecord();
            if (progress is not null && (i % 256 == 255 || i == capture.Frames.Count - 1))
            {
                progress.Report(i + 1);
            }
        }
    }

    /// <summary>Reads a CSV written by <see cref="WriteCsv"/> back into frames (channel names and values), for tools and round-trip checks.</summary>
    public static (IReadOnlyList<string> Channels, IReadOnlyList<CaptureFrame> Frames) ReadCsv(TextReader input)
    {
        ArgumentNullException.ThrowIfNull(input);
        using var csv = new CsvReader(input, CsvFormat, leaveOpen: true);
        if (!csv.Read() || !csv.ReadHeader() || csv.HeaderRecord is not { Length: >= 2 } header)
        {
            throw new InvalidDataException("the CSV has no header");
        }

        var names = header.Skip(2).Select(h => h[..h.LastIndexOf(" [", StringComparison.Ordinal)]).ToArray();
        var frames = new List<CaptureFrame>();
        while (csv.Read())
        {
            var ts = DateTimeOffset.Parse(csv.GetField(0)!, CultureInfo.InvariantCulture).ToUnixTimeMilliseconds();
            var values = new float[names.Length];
            for (var c = 0; c < names.Length; c++)
            {
                var cell = csv.GetField(c + 2) ?? "";
                values[c] = cell.Length == 0 ? float.NaN : float.Parse(cell, CultureInfo.InvariantCulture);
            }

            frames.Add(new CaptureFrame(ts, values));
        }

        return (names, frames);
    }

    /// <summary>Writes the event (record and details) and its capture as one JSON document.</summary>
    public static void WriteJson(ReviewedEvent e, Stream output, IProgress<int>? progress = null)
    {
        ArgumentNullException.ThrowIfNull(e);
        ArgumentNullException.ThrowIfNull(output);
        using var w = new Utf8JsonWriter(output, Indented);
        var r = e.Record;
        w.WriteStartObject();
        w.WritePropertyName("event");
        w.WriteStartObject();
        w.WriteNumber("id", r.Id);
        w.WriteString("site", r.SiteId);
        w.WriteString("silo", r.SiloId);
        w.WriteString("start", DateTimeOffset.FromUnixTimeMilliseconds(r.StartedMs));
        if (r.EndedMs is { } end)
        {
            w.WriteString("end", DateTimeOffset.FromUnixTimeMilliseconds(end));
        }
        else
        {
            w.WriteNull("end");
        }

        Number(w, "massAtStartKg", r.MassAtStartKg);
        Number(w, "massOutKg", r.MassOutKg);
        Number(w, "meanRateKgPerS", r.MeanRateKgPerS);
        Number(w, "peakRateKgPerS", r.PeakRateKgPerS);
        Number(w, "maxA1Ratio", r.MaxAsymmetryRatio);
        Number(w, "directionDeg", r.AsymmetryDirectionDeg);
        Number(w, "maxA2Ratio", r.MaxA2Ratio);
        Number(w, "maxPeakOverMean", r.MaxPeakOverMean);
        Number(w, "maxMeasuredOverExpected", r.MaxMeasuredOverExpected);
        if (r.HighestPriority is { } p)
        {
            w.WriteNumber("highestPriority", p);
        }
        else
        {
            w.WriteNull("highestPriority");
        }

        w.WriteNumber("alarmsRaised", r.AlarmsRaised);
        w.WriteEndObject();
        w.WritePropertyName("details");
        if (e.Details is null)
        {
            w.WriteNullValue();
        }
        else
        {
            JsonSerializer.Serialize(w, e.Details, DischargeEventDetails.Json);
        }

        w.WritePropertyName("capture");
        if (e.Capture is not { } capture)
        {
            w.WriteNullValue();
        }
        else
        {
            w.WriteStartObject();
            w.WriteNumber("intervalMs", capture.IntervalMs);
            w.WriteNumber("decimations", capture.Decimations);
            w.WriteStartArray("channels");
            foreach (var c in capture.Channels)
            {
                w.WriteStartObject();
                w.WriteString("name", c.Name);
                w.WriteString("kind", JsonNamingPolicy.CamelCase.ConvertName(c.Kind.ToString()));
                w.WriteString("unit", c.Unit);
                w.WriteString("sensor", c.Sensor);
                w.WriteString("ring", c.Ring);
                Number(w, "angleDeg", c.AngleDeg);
                w.WriteEndObject();
            }

            w.WriteEndArray();
            w.WriteStartArray("frames");
            for (var i = 0; i < capture.Frames.Count; i++)
            {
                var f = capture.Frames[i];
                w.WriteStartArray();
                w.WriteNumberValue(f.TimestampMs);
                foreach (var v in f.Values)
                {
                    if (float.IsFinite(v))
                    {
                        w.WriteNumberValue(v);
                    }
                    else
                    {
                        w.WriteNullValue();
                    }
                }

                w.WriteEndArray();
                if (progress is not null && (i % 256 == 255 || i == capture.Frames.Count - 1))
                {
                    progress.Report(i + 1);
                }
            }

            w.WriteEndArray();
            w.WriteEndObject();
        }

        w.WriteString("caution", ReviewedEvent.Caution);
        w.WriteEndObject();
    }

    private static void Number(Utf8JsonWriter w, string name, double value)
    {
        if (double.IsFinite(value))
        {
            w.WriteNumber(name, value);
        }
        else
        {
            w.WriteNull(name);
        }
    }
}
