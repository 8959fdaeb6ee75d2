using System.Diagnostics;
using System.Net.Http;
using System.Text.Json;
using Xunit.Abstractions;

namespace SiloWatch.Storage.Tests.Support;

/// <summary>
/// The servers tests/run.sh provides: SILOWATCH_TEST_VM_URL (a shared VictoriaMetrics) and
/// SILOWATCH_TEST_VM_BIN (its binary, for tests that stop and restart their own). Missing ones
/// fail the test when SILOWATCH_REQUIRE_SERVERS=1, else the test returns early with a note.
/// </summary>
public static class VmEnvironment
{
    public static string? Url => Environment.GetEnvironmentVariable("SILOWATCH_TEST_VM_URL") is { Length: > 0 } u ? u.TrimEnd('/') : null;

    public static string? Binary => Environment.GetEnvironmentVariable("SILOWATCH_TEST_VM_BIN") is { Length: > 0 } b ? b : null;

    public static bool Available(ITestOutputHelper output, bool url = false, bool binary = false)
    {
        var missing = new List<string>();
        if (url && Url is null)
        {
            missing.Add("SILOWATCH_TEST_VM_URL");
        }

        if (binary && Binary is null)
        {
            missing.Add("SILOWATCH_TEST_VM_BIN");
        }

        if (missing.Count == 0)
        {
            return true;
        }

        var note = $"{string.Join(" and ", missing)} not set: this test needs VictoriaMetrics (tests/run.sh starts one)";
        if (Environment.GetEnvironmentVariable("SILOWATCH_REQUIRE_SERVERS") == "1")
        {
            Assert.Fail(note + ", and SILOWATCH_REQUIRE_SERVERS=1");
        }

        output.WriteLine("NOT RUN: " + note);
        return false;
    }
}

/// <summary>One exported series: metric name, labels, samples.</summary>
public sealed record ExportedSeries(string Name, IReadOnlyDictionary<string, string> Labels, double[] Values, long[] Timestamps);

/// <summary>Reads back through /api/v1/export (JSON lines).</summary>
public sealed class VmReader(string url) : IDisposable
{
    private readonly HttpClient _http = new() { BaseAddress = new Uri(url), Timeout = TimeSpan.FromSeconds(30) };

    public async Task<List<ExportedSeries>> ExportAsync(string selector)
    {
        // Make just-ingested rows searchable now instead of after the next background flush.
        using (await _http.GetAsync("/internal/force_flush")) { }
        var body = await _http.GetStringAsync("/api/v1/export?match[]=" + Uri.EscapeDataString(selector));
        var result = new List<ExportedSeries>();
        foreach (var line in body.Split('\n', StringSplitOptions.RemoveEmptyEntries))
        {
            using var doc = JsonDocument.Parse(line);
            var labels = new Dictionary<string, string>(StringComparer.Ordinal);
            var name = "";
            foreach (var p in doc.RootElement.GetProperty("metric").EnumerateObject())
            {
                if (p.Name == "__name__")
                {
                    name = p.Value.GetString()!;
                }
                else
                {
                    labels[p.Name] = p.Value.GetString()!;
                }
            }

            var values = doc.RootElement.GetProperty("values").EnumerateArray().Select(v => v.ValueKind == JsonValueKind.String ? double.Parse(v.GetString()!, System.Globalization.CultureInfo.InvariantCulture) : v.GetDouble()).ToArray();
            var timestamps = doc.RootElement.GetProperty("timestamps").EnumerateArray().Select(v => v.GetInt64()).ToArray();
            result.Add(new ExportedSeries(name, labels, values, timestamps));
        }

        return result;
    }

    /// <summary>Polls the export until <paramref name="done"/> holds or the (generous) timeout passes; returns the last answer.</summary>
    public async Task<List<ExportedSeries>> ExportWhenAsync(string selector, Func<List<ExportedSeries>, bool> done, TimeSpan timeout)
    {
        var until = DateTime.UtcNow + timeout;
        while (true)
        {
            var series = await ExportAsync(selector);
            if (done(series) || DateTime.UtcNow > until)
            {
                return series;
            }

            await Task.Delay(250);
        }
    }

    public void Dispose() => _http.Dispose();
}

/// <summary>A VictoriaMetrics process of the test's own, on a free loopback port, which the test can stop and start again.</summary>
public sealed class VmServer : IAsyncDisposable
{
    private readonly string _binary;
    private readonly string _dataPath;
    private readonly ITestOutputHelper _output;
    private Process? _process;

    private VmServer(string binary, string dataPath, int port, ITestOutputHelper output)
    {
        _binary = binary;
        _dataPath = dataPath;
        Port = port;
        _output = output;
    }

    public int Port { get; }

    public string Url => $"http://127.0.0.1:{Port}";

    public static async Task<VmServer> StartAsync(string binary, string dataPath, ITestOutputHelper output)
    {
        var server = Create(binary, dataPath, output);
        await server.StartAsync();
        return server;
    }

    /// <summary>Picks a free port and data path but does not start the server yet.</summary>
    public static VmServer Create(string binary, string dataPath, ITestOutputHelper output) => new(binary, dataPath, Some.ClosedPort(), output);

    public async Task StartAsync()
    {
        var info = new ProcessStartInfo(_binary)
        {
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        info.ArgumentList.Add($"-httpListenAddr=127.0.0.1:{Port}");
        info.ArgumentList.Add($"-storageDataPath={_dataPath}");
        info.ArgumentList.Add("-search.latencyOffset=1s");
        info.ArgumentList.Add("-retentionPeriod=100y");
        _process = Process.Start(info)!;
        _process.OutputDataReceived += (_, e) => Note(e.Data);
        _process.ErrorDataReceived += (_, e) => Note(e.Data);
        _process.BeginOutputReadLine();
        _process.BeginErrorReadLine();

        using var http = new HttpClient { Timeout = TimeSpan.FromSeconds(2) };
        var until = DateTime.UtcNow + TimeSpan.FromSeconds(60);
        while (DateTime.UtcNow < until)
        {
            Assert.False(_process.HasExited, $"victoria-metrics exited at start with code {(_process.HasExited ? _process.ExitCode : 0)}");
            try
            {
                using var response = await http.GetAsync(Url + "/health");
                if (response.IsSuccessStatusCode)
                {
                    return;
                }
            }
            catch (HttpRequestException)
            {
            }
            catch (TaskCanceledException)
            {
            }

            await Task.Delay(100);
        }

        Assert.Fail("victoria-metrics did not become healthy within 60 s");
    }

    /// <summary>Graceful stop (SIGTERM): the server flushes what it took before it exits.</summary>
    public async Task StopAsync()
    {
        if (_process is null || _process.HasExited)
        {
            return;
        }

        using (var kill = Process.Start("kill", ["-TERM", _process.Id.ToString(System.Globalization.CultureInfo.InvariantCulture)]))
        {
            await kill.WaitForExitAsync();
        }

        using var cts = new CancellationTokenSource(TimeSpan.FromSeconds(60));
        try
        {
            await _process.WaitForExitAsync(cts.Token);
        }
        catch (OperationCanceledException)
        {
            _process.Kill(entireProcessTree: true);
            await _process.WaitForExitAsync();
        }

        _process.Dispose();
        _process = null;
    }

    public async ValueTask DisposeAsync() => await StopAsync();

    private void Note(string? line)
    {
        if (line is not null && (line.Contains("\terror\t", StringComparison.Ordinal) || line.Contains("\twarn\t", StringComparison.Ordinal)))
        {
            try
            {
                _output.WriteLine("victoria-metrics: " + line);
            }
            catch (InvalidOperationException)
            {
            }
        }
    }
}
