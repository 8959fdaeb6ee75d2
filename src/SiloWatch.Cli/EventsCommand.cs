using System.CommandLine;
using System.Globalization;
using Microsoft.Extensions.Configuration;
using SiloWatch.Review;
using SiloWatch.Storage;

namespace SiloWatch.Cli;

/// <summary>
/// `silowatch events`: review of the discharge events in the journal: list (with filters), show one,
/// export its capture (CSV or JSON), render its HTML report. Reads the journal file the service writes
/// (Storage:JournalPath of the service's settings, or --journal). Exit codes: 0 done, 1 no such event
/// or nothing stored to export, 2 bad arguments or no journal.
/// </summary>
internal static class EventsCommand
{
    public const string DefaultConfigPath = "config/appsettings.json";
    public const string DefaultJournalPath = "data/silowatch-journal.db";

    public static Command Create()
    {
        var journal = new Option<FileInfo?>("--journal", "-j")
        {
            Description = "Journal file (default: Storage:JournalPath of the service settings, data/silowatch-journal.db)",
            Recursive = true,
        };
        var config = new Option<FileInfo>("--config")
        {
            Description = "Service settings to take the journal path from (SILOWATCH_Storage__JournalPath overrides it, as for the service)",
            DefaultValueFactory = _ => new FileInfo(DefaultConfigPath),
            Recursive = true,
        };
        var command = new Command("events", "Review recorded discharge events: list, show, export the capture, render a report");
        command.Options.Add(journal);
        command.Options.Add(config);

        command.Subcommands.Add(List(journal, config));
        command.Subcommands.Add(Show(journal, config));
        command.Subcommands.Add(Export(journal, config));
        command.Subcommands.Add(Report(journal, config));
        return command;
    }

    private static Command List(Option<FileInfo?> journalOption, Option<FileInfo> configOption)
    {
        var site = new Option<string?>("--site") { Description = "Only this site" };
        var silo = new Option<string?>("--silo") { Description = "Only this silo (site/silo, or the silo id with --site)" };
        var from = new Option<string?>("--from") { Description = "Events ending at or after this time (ISO-8601, UTC unless an offset is given)" };
        var to = new Option<string?>("--to") { Description = "Events starting before this time" };
        var priority = new Option<int?>("--priority") { Description = "Only events that raised an alarm of this priority or higher (1 highest .. 4)" };
        var minA1 = new Option<double?>("--min-a1") { Description = "Only events whose peak A1/A0 reached this" };
        var limit = new Option<int>("--limit") { Description = "At most this many, newest last", DefaultValueFactory = _ => 200 };
        var command = new Command("list", "List discharge events, oldest first") { site, silo, from, to, priority, minA1, limit };
        command.SetAction(parse =>
        {
            var siteId = parse.GetValue(site);
            var siloId = parse.GetValue(silo);
            if (siloId is not null && siloId.Contains('/', StringComparison.Ordinal))
            {
                var parts = siloId.Split('/', 2);
                (siteId, siloId) = (parts[0], parts[1]);
            }

            if (!TryTime(parse.GetValue(from), long.MinValue, out var fromMs) || !TryTime(parse.GetValue(to), long.MaxValue, out var toMs))
            {
                Console.Error.WriteLine("--from and --to take an ISO-8601 time, e.g. 2026-03-10T21:00:00Z");
                return 2;
            }

            if (parse.GetValue(priority) is { } p && p is < 1 or > 4)
            {
                Console.Error.WriteLine($"--priority must be 1..4 (got {p})");
                return 2;
            }

            return WithJournal(parse.GetValue(journalOption), parse.GetValue(configOption)!, j =>
            {
                var events = j.QueryEvents(new EventQuery(siteId, siloId, fromMs, toMs, parse.GetValue(priority), parse.GetValue(minA1), Limit: Math.Max(1, parse.GetValue(limit))));
                if (events.Count == 0)
                {
                    Console.Out.WriteLine("no discharge events match");
                    return 0;
                }

                Console.Out.WriteLine($"{"id",5}  {"silo",-16} {"start (UTC)",-20} {"duration",8} {"out t",8} {"mean t/h",8} {"A1/A0",6} {"dir",4} {"meas/exp",8} {"alarms",6} {"prio",4}");
                foreach (var e in events)
                {
                    Console.Out.WriteLine(string.Create(CultureInfo.InvariantCulture,
                        $"{e.Id,5}  {e.SiteId + "/" + e.SiloId,-16} {ReviewedEvent.Time(e.StartedMs),-20} {(e.EndedMs is { } end ? $"{(end - e.StartedMs) / 1000.0:0} s" : "running"),8} {e.MassOutKg / 1000,8:0.0} {e.MeanRateKgPerS * 3.6,8:0.0} {e.MaxAsymmetryRatio,6:0.000} {e.AsymmetryDirectionDeg,4:0} {ReviewedEvent.Number(e.MaxMeasuredOverExpected, "0.00"),8} {e.AlarmsRaised,6} {(e.HighestPriority is { } hp ? hp.ToString(CultureInfo.InvariantCulture) : "-"),4}"));
                }

                Console.Out.WriteLine($"{events.Count} event(s). {Short}");
                return 0;
            });
        });
        return command;
    }

    private static Command Show(Option<FileInfo?> journalOption, Option<FileInfo> configOption)
    {
        var id = new Argument<long>("id") { Description = "Event id (as `events list` shows)" };
        var command = new Command("show", "Show one event: summary, rings, alarms raised, data quality") { id };
        command.SetAction(parse => WithEvent(parse.GetValue(journalOption), parse.GetValue(configOption)!, parse.GetValue(id), e =>
        {
            var labels = e.Summary();
            var width = labels.Max(x => x.Label.Length);
            foreach (var (label, value) in labels)
            {
                Console.Out.WriteLine($"{label.PadRight(width)}  {value}");
            }

            if (e.RingRows() is { Count: > 0 } rings)
            {
                Console.Out.WriteLine();
                WriteTable(ReviewedEvent.RingHeader, rings);
            }

            if (e.AlarmRows() is { Count: > 0 } alarms)
            {
                Console.Out.WriteLine();
                WriteTable(ReviewedEvent.AlarmHeader, alarms);
            }

            if (e.FaultRows() is { Count: > 0 } faults)
            {
                Console.Out.WriteLine();
                WriteTable(ReviewedEvent.FaultHeader, faults);
            }

            foreach (var note in e.Details?.Notes ?? [])
            {
                Console.Out.WriteLine("note: " + note);
            }

            Console.Out.WriteLine();
            Console.Out.WriteLine("CAUTION: " + ReviewedEvent.Caution);
            return 0;
        }));
        return command;
    }

    private static Command Export(Option<FileInfo?> journalOption, Option<FileInfo> configOption)
    {
        var id = new Argument<long>("id") { Description = "Event id" };
        var format = new Option<string>("--format", "-f") { Description = "csv (the capture) or json (the record, details and capture)", DefaultValueFactory = _ => "csv" };
        format.AcceptOnlyFromAmong("csv", "json");
        var output = new Option<FileInfo?>("--output", "-o") { Description = "File to write (default: standard output)" };
        var command = new Command("export", "Export an event's capture of the silo's series as CSV or JSON; progress goes to stderr") { id, format, output };
        command.SetAction(parse => WithEvent(parse.GetValue(journalOption), parse.GetValue(configOption)!, parse.GetValue(id), e =>
        {
            var json = parse.GetValue(format) == "json";
            if (!json && e.Capture is null)
            {
                Console.Error.WriteLine($"event {e.Record.Id} has no stored capture (it was journaled before captures were recorded, or is still in progress)");
                return 1;
            }

            var frames = e.Capture?.Frames.Count ?? 0;
            var progress = new StderrProgress($"exporting event {e.Record.Id}", frames);
            var file = parse.GetValue(output);
            using (var stream = file is null ? Console.OpenStandardOutput() : file.Create())
            {
                if (json)
                {
                    CaptureExport.WriteJson(e, stream, progress);
                }
                else
                {
                    using var writer = new StreamWriter(stream, new System.Text.UTF8Encoding(false), 64 * 1024, leaveOpen: true);
                    CaptureExport.WriteCsv(e.Capture!, writer, progress);
                }
            }

            progress.Done(file?.FullName);
            return 0;
        }));
        return command;
    }

    private static Command Report(Option<FileInfo?> journalOption, Option<FileInfo> configOption)
    {
        var id = new Argument<long>("id") { Description = "Event id" };
        var output = new Option<FileInfo?>("--output", "-o") { Description = "HTML file to write (default: event-<id>.html)" };
        var command = new Command("report", "Render an event's report: one self-contained HTML file with plots, the summary and the caution") { id, output };
        command.SetAction(parse => WithEvent(parse.GetValue(journalOption), parse.GetValue(configOption)!, parse.GetValue(id), e =>
        {
            var file = parse.GetValue(output) ?? new FileInfo($"event-{e.Record.Id}.html");
            var html = HtmlReport.Render(e, new Progress<string>(step => Console.Error.WriteLine($"report of event {e.Record.Id}: {step}")));
            File.WriteAllText(file.FullName, html);
            Console.Error.WriteLine($"report of event {e.Record.Id}: written to {file.FullName} ({html.Length / 1024} KiB)");
            Console.Out.WriteLine(file.FullName);
            return 0;
        }));
        return command;
    }

    private const string Short = "Limits are set by a licensed structural engineer under local code; monitoring supplements inspection.";

    /// <summary>The journal path: --journal, else Storage:JournalPath from the settings file and SILOWATCH_ environment variables, as the service reads it.</summary>
    public static string JournalPath(FileInfo? journal, FileInfo config)
    {
        if (journal is not null)
        {
            return journal.FullName;
        }

        var settings = new ConfigurationBuilder()
            .AddJsonFile(config.FullName, optional: true, reloadOnChange: false)
            .AddEnvironmentVariables("SILOWATCH_")
            .Build();
        var path = settings["Storage:JournalPath"] ?? DefaultJournalPath;
        return Path.GetFullPath(path);
    }

    private static int WithJournal(FileInfo? journal, FileInfo config, Func<Journal, int> action)
    {
        var path = JournalPath(journal, config);
        Journal j;
        try
        {
            j = Journal.OpenExisting(path, TimeProvider.System);
        }
        catch (FileNotFoundException)
        {
            Console.Error.WriteLine($"no journal at {path}: give --journal, or run from the folder the service runs in (Storage:JournalPath)");
            return 2;
        }
        catch (Exception ex) when (ex is InvalidOperationException or Microsoft.Data.Sqlite.SqliteException)
        {
            Console.Error.WriteLine($"cannot read the journal {path}: {ex.Message}");
            return 2;
        }

        using (j)
        {
            return action(j);
        }
    }

    private static int WithEvent(FileInfo? journal, FileInfo config, long id, Func<ReviewedEvent, int> action) =>
        WithJournal(journal, config, j =>
        {
            ReviewedEvent e;
            try
            {
                e = ReviewedEvent.Load(j, id);
            }
            catch (KeyNotFoundException ex)
            {
                Console.Error.WriteLine(ex.Message);
                return 1;
            }
            catch (InvalidDataException ex)
            {
                Console.Error.WriteLine($"event {id}: {ex.Message}");
                return 1;
            }

            return action(e);
        });

    private static bool TryTime(string? text, long fallback, out long ms)
    {
        ms = fallback;
        if (text is null)
        {
            return true;
        }

        if (DateTimeOffset.TryParse(text, CultureInfo.InvariantCulture, DateTimeStyles.AssumeUniversal, out var t))
        {
            ms = t.ToUnixTimeMilliseconds();
            return true;
        }

        return false;
    }

    private static void WriteTable(IReadOnlyList<string> header, IReadOnlyList<string[]> rows)
    {
        var widths = header.Select((h, i) => Math.Max(h.Length, rows.Max(r => r[i].Length))).ToArray();
        Console.Out.WriteLine(string.Join("  ", header.Select((h, i) => h.PadRight(widths[i]))).TrimEnd());
        foreach (var row in rows)
        {
            Console.Out.WriteLine(string.Join("  ", row.Select((c, i) => c.PadRight(widths[i]))).TrimEnd());
        }
    }

    /// <summary>Frames written so far, to stderr: standard output may be the CSV itself.</summary>
    private sealed class StderrProgress(string what, int total) : IProgress<int>
    {
        private int _lastPercent = -1;

        public void Report(int value)
        {
            var percent = total > 0 ? (int)(100L * value / total) : 100;
            if (percent / 10 != _lastPercent / 10)
            {
                _lastPercent = percent;
                Console.Error.WriteLine($"{what}: {value}/{total} frames ({percent} %)");
            }
        }

        public void Done(string? file) => Console.Error.WriteLine(file is null ? $"{what}: done" : $"{what}: written to {file}");
    }
}
