using System.Globalization;

namespace SiloWatch.Simulator.Cli;

/// <summary>
/// Progress of a run: a one-line bar redrawn a few times a second on an interactive console; on any
/// other writer (a log, a redirected stream) a plain status line once a minute.
/// </summary>
public sealed class ProgressBar(TextWriter writer, int width = 30)
{
    private readonly bool _interactive = ReferenceEquals(writer, Console.Out) && !Console.IsOutputRedirected;
    private long _lastDrawTicks = long.MinValue;
    private bool _drawn;

    /// <summary>Draws the bar for a fraction 0..1 (NaN: no bar, only the status, for endless runs).</summary>
    public void Report(double fraction, string status, bool force = false)
    {
        var now = Environment.TickCount64;
        var interval = _interactive ? 250 : 60_000;
        if (!force && _lastDrawTicks != long.MinValue && now - _lastDrawTicks < interval)
        {
            return;
        }

        _lastDrawTicks = now;
        var percent = double.IsNaN(fraction) ? "" : string.Create(CultureInfo.InvariantCulture, $"{Math.Clamp(fraction, 0, 1) * 100,5:F1}% ");
        if (!_interactive)
        {
            writer.WriteLine(percent + status);
            return;
        }

        _drawn = true;
        if (double.IsNaN(fraction))
        {
            writer.Write($"\r{status}   ");
        }
        else
        {
            var filled = (int)Math.Round(Math.Clamp(fraction, 0, 1) * width);
            writer.Write($"\r[{new string('#', filled)}{new string('.', width - filled)}] {percent}{status}   ");
        }

        writer.Flush();
    }

    /// <summary>Ends the bar's line so that the summary starts on a line of its own.</summary>
    public void Finish()
    {
        if (_drawn)
        {
            writer.WriteLine();
        }
    }
}
