using System.Text.RegularExpressions;
using SiloWatch.Review.Tests.Support;

namespace SiloWatch.Review.Tests;

public sealed partial class HtmlReportTests
{
    [Fact]
    public void TheReportEmbedsEveryPlotAsADecodableNonBlankImageWithItsLabelsDrawn()
    {
        var html = HtmlReport.Render(SomeEvents.Eccentric());
        var figures = Figures(html);
        Assert.Equal(["mass-rate", "wall-strain", "asymmetry", "ring-pattern-R1", "loads-depth"], figures.Select(f => f.Id));
        foreach (var (id, src) in figures)
        {
            using var image = PlotPixels.FromDataUri(src);
            Assert.True(image.Width >= 600 && image.Height >= 400, $"{id}: {image.Width}x{image.Height}");
            Assert.True(image.DistinctColours() > 20, $"{id}: {image.DistinctColours()} colours: blank?");
            // ScottPlot draws the title in the top band: with no font found it stays empty.
            var title = image.DarkShare(0, image.Height / 14);
            Assert.True(title > 0.01, $"{id}: the title band is {title:P1} dark: the font did not render");
        }

        Assert.Contains("licensed structural engineer", html, StringComparison.Ordinal);
        Assert.Contains("Never enter a silo", html, StringComparison.Ordinal);
        Assert.DoesNotContain("<script", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("http://", html, StringComparison.Ordinal); // self-contained: nothing fetched
    }

    [Fact]
    public void TheAxisLabelsOfATimePlotRenderBesideTheDataArea()
    {
        var e = SomeEvents.Eccentric();
        var plot = ReportPlots.MassAndRate(e, e.Capture!, 1000, 420);
        using var image = new PlotPixels(plot.Png);
        // Left margin (tick labels and the axis label) and bottom margin hold dark text.
        Assert.True(image.DarkShare(60, 360, 0, 70) > 0.005, "no tick or axis labels on the left");
        Assert.True(image.DarkShare(380, 420, 100, 900) > 0.005, "no tick or axis labels at the bottom");
    }

    [Theory]
    [InlineData(0)]
    [InlineData(57)]
    [InlineData(135)]
    [InlineData(212)]
    [InlineData(300)]
    public void ThePolarPlotsArrowPointsInTheEventsDirectionFromTheReferenceMarkClockwise(double direction)
    {
        var e = SomeEvents.Eccentric(direction);
        var html = HtmlReport.Render(e);
        var figure = Figures(html).Single(f => f.Id == "ring-pattern-R1");
        Assert.Matches($"id=\"plot-ring-pattern-R1\" data-direction-deg=\"{direction}\" data-peak=\"true\"", html);
        using var image = PlotPixels.FromDataUri(figure.Src);
        var drawn = image.ArrowDirectionDeg();
        Assert.True(PlotPixels.AngleBetween(drawn, direction) <= 3, $"arrow drawn toward {drawn:0.0} deg, event direction {direction} deg");
    }

    [Fact]
    public void TheSummaryTableCarriesTheHeadlineNumbersAndTheRingsAlarmsAndFaults()
    {
        var html = HtmlReport.Render(SomeEvents.Eccentric());
        Assert.Contains("<th>mass out</th><td>90.0 t</td>", html, StringComparison.Ordinal);
        Assert.Contains("<th>mean rate</th><td>180.0 t/h</td>", html, StringComparison.Ordinal);
        Assert.Contains("<th>peak A1/A0</th><td>0.131 toward 300 deg from the reference mark</td>", html, StringComparison.Ordinal);
        Assert.Contains("<th>alarms raised</th><td>1 (highest priority 2)</td>", html, StringComparison.Ordinal);
        Assert.Contains("<td>brackenford/S1/asymmetry-a1-R1</td>", html, StringComparison.Ordinal);
        Assert.Contains("<td>R1-004</td><td>200</td><td>120</td><td>stuck</td>", html, StringComparison.Ordinal);
        Assert.Contains("C_h = 1.15, C_w = 1.10", html, StringComparison.Ordinal);
        Assert.Contains("<td>R1</td><td>axial</td><td>1.50</td><td>6</td><td>104.2</td><td>120.3</td><td>0.87</td>", html, StringComparison.Ordinal);
    }

    [Fact]
    public void AnEventWithoutDetailsOrCaptureStillGetsAReportThatSaysSo()
    {
        var e = SomeEvents.Eccentric();
        var bare = new ReviewedEvent(e.Record with { DetailsJson = "{}" }, null, null);
        var html = HtmlReport.Render(bare);
        Assert.Empty(Figures(html));
        Assert.Contains("nothing to plot", html, StringComparison.Ordinal);
        Assert.Contains("not recorded", html, StringComparison.Ordinal);
        Assert.Contains("licensed structural engineer", html, StringComparison.Ordinal);
    }

    private static List<(string Id, string Src)> Figures(string html) =>
        [.. FigureImage().Matches(html).Select(m => (m.Groups["id"].Value, m.Groups["src"].Value))];

    [GeneratedRegex("<figure id=\"plot-(?<id>[^\"]+)\"[^>]*>.*?<img [^>]*src=\"(?<src>[^\"]+)\"", RegexOptions.Singleline)]
    private static partial Regex FigureImage();
}
