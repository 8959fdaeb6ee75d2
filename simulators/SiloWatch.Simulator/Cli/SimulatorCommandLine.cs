using System.Globalization;
using SiloWatch.Simulator.Replay;

namespace SiloWatch.Simulator.Cli;

/// <summary>The simulator's own command line: <c>run</c> a scenario or <c>replay</c> a recorded CSV (parsed by hand).</summary>
public static class SimulatorCommandLine
{
    public const string Usage = """
        SiloWatch plant simulator (invented demo plant; not real plant data)

          run    --scenario FILE [--speed 1..1000] [--broker HOST:PORT] [--seed N] [--start ISO-8601]
                 [--truth FILE.csv] [--record FILE.csv] [--plant FILE] [--materials FILE]
                 [--prefix silowatch] [--user NAME --password SECRET] [--loop]
          replay --file FILE.csv [--speed 1..1000] [--broker HOST:PORT] [--prefix silowatch]
                 [--user NAME --password SECRET] [--publisher replay] [--retime]

        Examples:
          run --scenario simulators/scenarios/normal-day.json --speed 100 --broker 127.0.0.1:1883 --truth out/truth.csv
          replay --file out/recorded.csv --speed 10 --broker 127.0.0.1:1883
        """;

    public static async Task<int> RunAsync(string[] args, TextWriter output, TextWriter error)
    {
        ArgumentNullException.ThrowIfNull(args);
        if (args.Length == 0 || args[0] is "-h" or "--help" or "help")
        {
            output.WriteLine(Usage);
            return args.Length == 0 ? 2 : 0;
        }

        using var cts = new CancellationTokenSource();
        ConsoleCancelEventHandler onCancel = (_, e) =>
        {
            e.Cancel = true;
            cts.Cancel();
        };
        Console.CancelKeyPress += onCancel;
        try
        {
            var parsed = Parse(args);
            switch (args[0])
            {
                case "run":
                    await SimulatorRunner.RunAsync(ToRunOptions(parsed), output, cts.Token).ConfigureAwait(false);
                    return 0;
                case "replay":
                    await ReplayRunner.RunAsync(ToReplayOptions(parsed), output, cts.Token).ConfigureAwait(false);
                    return 0;
                default:
                    error.WriteLine($"unknown command '{args[0]}'");
                    error.WriteLine(Usage);
                    return 2;
            }
        }
        catch (Exception ex) when (ex is ArgumentException or InvalidDataException or FileNotFoundException or DirectoryNotFoundException or InvalidOperationException or FormatException)
        {
            error.WriteLine("error: " + ex.Message);
            return 1;
        }
        finally
        {
            Console.CancelKeyPress -= onCancel;
        }
    }

    /// <summary>"--key value" pairs and "--flag" switches after the command word.</summary>
    public static Dictionary<string, string> Parse(string[] args)
    {
        ArgumentNullException.ThrowIfNull(args);
        var result = new Dictionary<string, string>(StringComparer.Ordinal);
        for (var i = 1; i < args.Length; i++)
        {
            var key = args[i];
            if (!key.StartsWith("--", StringComparison.Ordinal) || key.Length < 3)
            {
                throw new ArgumentException($"unexpected argument '{key}' (options start with --)");
            }

            key = key[2..];
            if (key is "loop" or "retime")
            {
                result[key] = "true";
                continue;
            }

            if (i + 1 >= args.Length)
            {
                throw new ArgumentException($"option --{key} needs a value");
            }

            result[key] = args[++i];
        }

        return result;
    }

    public static SimulatorRunOptions ToRunOptions(Dictionary<string, string> o)
    {
        ArgumentNullException.ThrowIfNull(o);
        Known(o, "scenario", "speed", "broker", "seed", "start", "truth", "record", "plant", "materials", "prefix", "user", "password", "loop");
        var options = new SimulatorRunOptions
        {
            ScenarioPath = o.TryGetValue("scenario", out var s) ? s : throw new ArgumentException("run needs --scenario FILE"),
        };
        if (o.TryGetValue("plant", out var plant))
        {
            options.PlantPath = plant;
        }
        else if (FindRepoFile("config/plant.demo.json") is { } p)
        {
            options.PlantPath = p;
        }

        if (o.TryGetValue("materials", out var materials))
        {
            options.MaterialsPath = materials;
        }
        else if (FindRepoFile("config/materials.json") is { } m)
        {
            options.MaterialsPath = m;
        }

        options.Speed = o.TryGetValue("speed", out var speed) ? Speed(speed) : 1;
        options.Seed = o.TryGetValue("seed", out var seed) ? int.Parse(seed, NumberStyles.Integer, CultureInfo.InvariantCulture) : 0;
        if (o.TryGetValue("start", out var start))
        {
            options.StartTime = DateTimeOffset.Parse(start, CultureInfo.InvariantCulture, DateTimeStyles.AssumeUniversal);
        }

        options.TruthCsvPath = o.GetValueOrDefault("truth");
        options.RecordCsvPath = o.GetValueOrDefault("record");
        options.TopicPrefix = o.GetValueOrDefault("prefix", "silowatch");
        options.Username = o.GetValueOrDefault("user");
        options.Password = o.GetValueOrDefault("password");
        options.Loop = o.ContainsKey("loop");
        (options.BrokerHost, options.BrokerPort) = Broker(o.GetValueOrDefault("broker", "127.0.0.1:1883"));
        return options;
    }

    public static ReplayOptions ToReplayOptions(Dictionary<string, string> o)
    {
        ArgumentNullException.ThrowIfNull(o);
        Known(o, "file", "speed", "broker", "prefix", "user", "password", "publisher", "retime");
        var options = new ReplayOptions
        {
            FilePath = o.TryGetValue("file", out var f) ? f : throw new ArgumentException("replay needs --file FILE.csv"),
            Speed = o.TryGetValue("speed", out var speed) ? Speed(speed) : 1,
            TopicPrefix = o.GetValueOrDefault("prefix", "silowatch"),
            Username = o.GetValueOrDefault("user"),
            Password = o.GetValueOrDefault("password"),
            Publisher = o.GetValueOrDefault("publisher", "replay"),
            Retime = o.ContainsKey("retime"),
        };
        (options.BrokerHost, options.BrokerPort) = Broker(o.GetValueOrDefault("broker", "127.0.0.1:1883"));
        return options;
    }

    private static void Known(Dictionary<string, string> o, params string[] keys)
    {
        foreach (var k in o.Keys)
        {
            if (!keys.Contains(k))
            {
                throw new ArgumentException($"unknown option --{k}");
            }
        }
    }

    private static double Speed(string text)
    {
        var v = Number(text, "--speed");
        return v is >= 1 and <= SimulatorRunner.MaxSpeed ? v : throw new ArgumentException($"--speed {text} must be between 1 and {SimulatorRunner.MaxSpeed}");
    }

    private static double Number(string text, string name) =>
        double.TryParse(text, NumberStyles.Float, CultureInfo.InvariantCulture, out var v) ? v : throw new ArgumentException($"{name} '{text}' is not a number");

    private static (string Host, int Port) Broker(string text)
    {
        var colon = text.LastIndexOf(':');
        if (colon <= 0 || !int.TryParse(text.AsSpan(colon + 1), NumberStyles.None, CultureInfo.InvariantCulture, out var port) || port is < 1 or > 65535)
        {
            throw new ArgumentException($"--broker '{text}' must be HOST:PORT");
        }

        return (text[..colon], port);
    }

    /// <summary>The repository's config files when run with `dotnet run` from the repository, else the copies beside the program.</summary>
    private static string? FindRepoFile(string relative)
    {
        var here = Path.Combine(Directory.GetCurrentDirectory(), relative);
        return File.Exists(here) ? here : null;
    }
}
