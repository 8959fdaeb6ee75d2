using System.Globalization;
using System.Net;
using System.Text;

namespace SiloWatch.Review;

/// <summary>
/// The review report of one discharge event: a single self-contained HTML file (no scripts, no
/// external resources; plots embedded as base64 PNG) with the summary table, the ring table, the
/// alarms raised, the data quality, the plots and the engineering caution.
/// </summary>
public static class HtmlReport
{
    /// <summary>Renders the report; <paramref name="progress"/> is told each plot's id as it is drawn.</summary>
    public static string Render(ReviewedEvent e, IProgress<string>? progress = null)
    {
        ArgumentNullException.ThrowIfNull(e);
        var plots = new List<RenderedPlot>();
        progress?.Report("plots");
        plots.AddRange(ReportPlots.All(e));
        progress?.Report("html");

        var html = new StringBuilder(64 * 1024);
        var title = $"Discharge event {e.Record.Id}, {e.SiloKey}, {ReviewedEvent.Time(e.Record.StartedMs)}";
        html.Append("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
        html.Append("<title>").Append(Encode(title)).Append("</title>\n<style>\n").Append(Style).Append("</style>\n</head>\n<body>\n");
        html.Append("<header><h1>").Append(Encode(title)).Append("</h1><p class=\"sub\">SiloWatch discharge event review</p></header>\n");
        html.Append("<section id=\"caution\" class=\"caution\"><strong>Caution.</strong> ").Append(Encode(ReviewedEvent.Caution)).Append("</section>\n");

        html.Append("<section><h2>Summary</h2>\n<table id=\"summary\" class=\"kv\">\n");
        foreach (var (label, value) in e.Summary())
        {
            html.Append("<tr><th>").Append(Encode(label)).Append("</th><td>").Append(Encode(value)).Append("</td></tr>\n");
        }

        html.Append("</table></section>\n");

        var rings = e.RingRows();
        if (rings.Count > 0)
        {
            html.Append("<section><h2>Rings</h2>\n<p>Loads in the load sense: axial n_z compression, hoop n_θ tension positive. ")
                .Append("Peak is the highest value of the ring's fitted pattern during the discharge; expected is the discharge load for the mass at that moment.</p>\n");
            Table(html, "rings", ReviewedEvent.RingHeader, rings);
            html.Append("</section>\n");
        }

        html.Append("<section><h2>Alarms raised during the event</h2>\n");
        var alarms = e.AlarmRows();
        if (alarms.Count == 0)
        {
            html.Append("<p id=\"alarms\">None.</p>\n");
        }
        else
        {
            Table(html, "alarms", ReviewedEvent.AlarmHeader, alarms);
            foreach (var a in e.Details!.Alarms)
            {
                html.Append("<p class=\"msg\"><code>").Append(Encode(a.Alarm)).Append("</code>: ").Append(Encode(a.Message)).Append("</p>\n");
            }
        }

        html.Append("</section>\n");

        if (e.Details is { } d)
        {
            html.Append("<section><h2>Data quality</h2>\n");
            if (d.Quality.SensorsAtFault.Count == 0)
            {
                html.Append("<p>Every sensor was good at every evaluation of the discharge.</p>\n");
            }
            else
            {
                Table(html, "faults", ReviewedEvent.FaultHeader, e.FaultRows());
            }

            foreach (var note in d.Notes)
            {
                html.Append("<p class=\"note\">").Append(Encode(note)).Append("</p>\n");
            }

            html.Append("</section>\n");
        }

        html.Append("<section><h2>Plots</h2>\n");
        if (plots.Count == 0)
        {
            html.Append("<p>No capture or details were stored with this event: nothing to plot.</p>\n");
        }

        var peak = e.PeakRing;
        foreach (var p in plots)
        {
            var direction = p.Id.StartsWith("ring-pattern-", StringComparison.Ordinal)
                ? e.Details!.Rings.First(r => "ring-pattern-" + r.Ring == p.Id).PatternAtMaxA1!.DirectionDeg
                : double.NaN;
            html.Append("<figure id=\"plot-").Append(Encode(p.Id)).Append('"');
            if (double.IsFinite(direction))
            {
                html.Append(" data-direction-deg=\"").Append(direction.ToString("0.###", CultureInfo.InvariantCulture)).Append('"');
                if (peak is not null && p.Id == "ring-pattern-" + peak.Ring)
                {
                    html.Append(" data-peak=\"true\"");
                }
            }

            html.Append(">\n<figcaption><strong>").Append(Encode(p.Title)).Append(".</strong> ").Append(Encode(p.Caption)).Append("</figcaption>\n");
            html.Append("<img alt=\"").Append(Encode(p.Title)).Append("\" width=\"").Append(p.Width.ToString(CultureInfo.InvariantCulture))
                .Append("\" height=\"").Append(p.Height.ToString(CultureInfo.InvariantCulture)).Append("\" src=\"data:image/png;base64,")
                .Append(Convert.ToBase64String(p.Png)).Append("\">\n</figure>\n");
        }

        html.Append("</section>\n<footer><p>").Append(Encode(ReviewedEvent.Caution)).Append("</p><p>Generated ")
            .Append(Encode(DateTimeOffset.UtcNow.ToString("yyyy-MM-dd HH:mm'Z'", CultureInfo.InvariantCulture))).Append(" from the journal; the time-series store is not needed.</p></footer>\n");
        html.Append("</body>\n</html>\n");
        return html.ToString();
    }

    private static void Table(StringBuilder html, string id, IReadOnlyList<string> header, IReadOnlyList<string[]> rows)
    {
        html.Append("<table id=\"").Append(id).Append("\"><thead><tr>");
        foreach (var h in header)
        {
            html.Append("<th>").Append(Encode(h)).Append("</th>");
        }

        html.Append("</tr></thead><tbody>\n");
        foreach (var row in rows)
        {
            html.Append("<tr>");
            foreach (var cell in row)
            {
                html.Append("<td>").Append(Encode(cell)).Append("</td>");
            }

            html.Append("</tr>\n");
        }

        html.Append("</tbody></table>\n");
    }

    private static string Encode(string s) => WebUtility.HtmlEncode(s);

    private const string Style = """
        body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; margin: 0 auto; max-width: 1060px; padding: 1rem 1.5rem; color: #1b1b1b; background: #fff; }
        header h1 { font-size: 1.45rem; margin: .2rem 0; }
        .sub { color: #555; margin: 0 0 1rem; }
        h2 { font-size: 1.15rem; border-bottom: 2px solid #d8d8d8; padding-bottom: .2rem; margin-top: 1.6rem; }
        table { border-collapse: collapse; margin: .5rem 0; font-size: .92rem; }
        th, td { border: 1px solid #cfcfcf; padding: .25rem .5rem; text-align: left; vertical-align: top; }
        thead th { background: #eef1f4; }
        table.kv th { background: #f6f6f6; width: 13rem; font-weight: 600; }
        .caution { border-left: 6px solid #b36b00; background: #fff6e5; padding: .6rem .9rem; margin: .8rem 0; }
        .note { color: #6a4a00; }
        .msg { font-size: .88rem; color: #333; }
        figure { margin: 1.2rem 0; }
        figcaption { font-size: .9rem; color: #333; margin-bottom: .4rem; }
        img { max-width: 100%; height: auto; border: 1px solid #e2e2e2; }
        footer { margin-top: 2rem; font-size: .85rem; color: #555; border-top: 1px solid #ddd; }
        """;
}
