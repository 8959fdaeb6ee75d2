using System.Globalization;

namespace SiloWatch.Simulator.Cli;

/// <summary>A one-line console progress bar, redrawn at most a few times a second.</summary>
public sealed class ProgressBar(TextWriter writer, int width = 30)
{
    private long _lastDrawTicks = long.MinValue;

    /// <summary>Draws the bar for a fraction 0..1 (NaN: no bar, only the status, for endless runs).</summary>
    public void Report(double fraction, string status, bool force = false)
    {
        var now = Environment.TickCount64;
        if (!force && now - _lastDrawTicks < 250)
        {
            return;
        }

        _lastDrawTicks = now;
        if (double.IsNaN(fraction))
        {
            writer.Write($"\r{status}   ");
        }
        else
        {
            var f = Math.Clamp(fraction, 0, 1);
            var filled = (int)Math.Round(f * width);
            writer.Write(string.Create(CultureInfo.InvariantCulture, $"\r[{new string('#', filled)}{new string('.', width - filled)}] {f * 100,5:F1}% {status}   "));
        }

        writer.Flush();
    }

    public void Finish() => writer.WriteLine();
}
