using ScottPlot;
using SiloWatch.Storage;

namespace SiloWatch.Review;

/// <summary>One rendered plot of a report: PNG bytes and what it shows.</summary>
/// <param name="Id">Stable name in the report ("mass-rate", "wall-strain", "asymmetry", "ring-pattern-R1", "loads-depth").</param>
public sealed record RenderedPlot(string Id, string Title, string Caption, byte[] Png, int Width, int Height);

/// <summary>
/// The plots of an event report, drawn with ScottPlot (headless, PNG). Time runs in minutes from the
/// event's start. The ring pattern is drawn as a polar plot on equal axes: 0° (the silo's reference
/// mark) at the top, angles clockwise as seen from above; the radius is a fixed offset plus the change
/// in the load sense, so the dashed circle means "no change"; a red arrow from the centre marks the
/// direction of the first harmonic. Text needs a font: <see cref="UseSansFont"/> picks one.
/// </summary>
public static class ReportPlots
{
    /// <summary>Colour of the direction arrow (and only of it) in the ring pattern plot.</summary>
    public static readonly Color DirectionColor = new(220, 0, 0);

    /// <summary>Colour of the centre mark (and only of it) in the ring pattern plot.</summary>
    public static readonly Color CentreColor = new(0, 0, 220);

    private static readonly Lock FontGate = new();
    private static bool _fontSet;

    /// <summary>
    /// Sets ScottPlot's default font to an installed sans font (DejaVu Sans on Debian, fonts-dejavu-core),
    /// else its own sans choice: without a font found, titles and labels would silently vanish.
    /// </summary>
    public static string UseSansFont()
    {
        lock (FontGate)
        {
            if (!_fontSet)
            {
                foreach (var candidate in new[] { "DejaVu Sans", "Liberation Sans", "Noto Sans", "Arial", Fonts.Sans })
                {
                    var typeface = Fonts.GetTypeface(candidate, bold: false, italic: false);
                    if (typeface is not null && string.Equals(typeface.FamilyName, candidate, StringComparison.OrdinalIgnoreCase))
                    {
                        Fonts.Default = candidate;
                        break;
                    }
                }

                _fontSet = true;
            }

            return Fonts.Default;
        }
    }

    public static IReadOnlyList<RenderedPlot> All(ReviewedEvent e, int width = 1000, int height = 420)
    {
        ArgumentNullException.ThrowIfNull(e);
        UseSansFont();
        var plots = new List<RenderedPlot>();
        if (e.Capture is { Frames.Count: > 1 } capture)
        {
            plots.Add(MassAndRate(e, capture, width, height));
            plots.Add(WallStrain(e, capture, width, height));
            plots.Add(Asymmetry(e, capture, width, height));
        }

        if (e.Details is { } d)
        {
            foreach (var ring in d.Rings.Where(r => r.PatternAtMaxA1 is not null))
            {
                plots.Add(RingPattern(e, ring, 620, 620));
            }

            if (d.ExpectedProfile.Count > 1)
            {
                plots.Add(LoadsWithDepth(e, d, width, 520));
            }
        }

        return plots;
    }

    public static RenderedPlot MassAndRate(ReviewedEvent e, EventCapture capture, int width, int height)
    {
        var plot = NewPlot($"Mass and rate, {e.SiloKey}, event {e.Record.Id}", "minutes from the start", "mass, t");
        var t = Minutes(e, capture);
        var mass = Scale(capture.Column(capture.IndexOf("mass_kg")), 1 / 1000.0);
        var rate = Scale(capture.Column(capture.IndexOf("rate_kg_s")), -3.6);
        AddLine(plot, t, mass, Colors.Navy, "mass, t");
        var r = AddLine(plot, t, rate, Colors.DarkOrange, "outflow rate, t/h");
        r.Axes.YAxis = plot.Axes.Right;
        plot.Axes.Right.Label.Text = "outflow rate, t/h";
        MarkStartAndEnd(plot, e);
        plot.ShowLegend(Alignment.UpperRight);
        return Render(plot, "mass-rate", "Mass and rate over time", "Contents mass (left) and outflow rate (right) from the inventory estimate; dashed lines mark the start and end of the flow.", width, height);
    }

    public static RenderedPlot WallStrain(ReviewedEvent e, EventCapture capture, int width, int height) =>
        ChannelsOverTime(e, capture, CaptureChannelKind.Strain, new ScottPlot.Palettes.Category20(), c => $"{c.Sensor} ({c.Ring}, {c.AngleDeg:0} deg)",
            ($"Wall strain per gauge, {e.SiloKey}", "strain, microstrain (tension positive)"),
            ("wall-strain", "Wall strain per gauge over time", "Compensated strain of every wall gauge as measured (before the wall watch's thermal correction)."),
            width, height);

    public static RenderedPlot Asymmetry(ReviewedEvent e, EventCapture capture, int width, int height) =>
        ChannelsOverTime(e, capture, CaptureChannelKind.RingA1Ratio, new ScottPlot.Palettes.Category10(), c => "ring " + c.Ring,
            ($"Ring asymmetry A1/A0, {e.SiloKey}", "A1/A0"),
            ("asymmetry", "Asymmetry over time", "First harmonic of each ring's load change since the pre-discharge baseline over the mean load; assessed only while discharging."),
            width, height);

    // Every channel of one kind over time, one colour each.
    private static RenderedPlot ChannelsOverTime(ReviewedEvent e, EventCapture capture, CaptureChannelKind kind, IPalette palette, Func<CaptureChannel, string> legend,
        (string Title, string YLabel) axes, (string Id, string Title, string Caption) figure, int width, int height)
    {
        var plot = NewPlot(axes.Title, "minutes from the start", axes.YLabel);
        var t = Minutes(e, capture);
        var i = 0;
        foreach (var (c, index) in capture.Channels.Select((c, k) => (c, k)).Where(x => x.c.Kind == kind))
        {
            AddLine(plot, t, capture.Column(index), palette.GetColor(i++), legend(c));
        }

        MarkStartAndEnd(plot, e);
        plot.ShowLegend(Alignment.UpperRight);
        return Render(plot, figure.Id, figure.Title, figure.Caption, width, height);
    }

    /// <summary>The ring's circumferential pattern at the moment of its largest A1/A0, with the first harmonic's direction marked.</summary>
    public static RenderedPlot RingPattern(ReviewedEvent e, RingEventDetails ring, int width, int height)
    {
        ArgumentNullException.ThrowIfNull(e);
        ArgumentNullException.ThrowIfNull(ring);
        var pattern = ring.PatternAtMaxA1 ?? throw new ArgumentException($"ring {ring.Ring} has no pattern", nameof(ring));
        var plot = new Plot();

        var curve = Enumerable.Range(0, 361).Select(deg => PatternHarmonic.Evaluate(pattern.Harmonics, deg)).ToArray();
        var gauges = pattern.GaugeChanges.Where(g => g.ChangeMicro is not null).ToArray();
        var extent = curve.Select(Math.Abs).Concat(gauges.Select(g => Math.Abs(g.ChangeMicro!.Value))).DefaultIfEmpty(1).Max();
        extent = Math.Max(extent, 1e-6);
        var offset = 1.2 * extent; // radius of "no change"
        var outer = offset + (1.15 * extent);

        foreach (var rr in new[] { offset - extent, offset, offset + extent })
        {
            if (rr <= 0)
            {
                continue;
            }

            var circle = plot.Add.Circle(0, 0, rr);
            circle.LineColor = rr == offset ? Colors.Gray : Colors.LightGray;
            circle.LinePattern = rr == offset ? LinePattern.Dashed : LinePattern.Solid;
            circle.LineWidth = 1;
        }

        for (var deg = 0; deg < 360; deg += 30)
        {
            var (x, y) = Xy(deg, outer);
            var spoke = plot.Add.Line(0, 0, x, y);
            spoke.LineColor = Colors.LightGray;
            spoke.LineWidth = 1;
            var (lx, ly) = Xy(deg, outer * 1.08);
            var label = plot.Add.Text(deg == 0 ? "0° ref. mark" : $"{deg}°", lx, ly);
            label.LabelFontSize = 13;
            label.LabelFontColor = Colors.Black;
            label.LabelAlignment = Alignment.MiddleCenter;
        }

        var xs = new double[curve.Length];
        var ys = new double[curve.Length];
        for (var deg = 0; deg < curve.Length; deg++)
        {
            (xs[deg], ys[deg]) = Xy(deg, Math.Max(0, offset + curve[deg]));
        }

        var fitted = plot.Add.ScatterLine(xs, ys);
        fitted.Color = Colors.DarkGreen;
        fitted.LineWidth = 2.5f;
        fitted.LegendText = "fitted change n ≤ 2 (thermally corrected)";

        if (gauges.Length > 0)
        {
            var gx = gauges.Select(g => Xy(g.AngleDeg, Math.Max(0, offset + g.ChangeMicro!.Value)).X).ToArray();
            var gy = gauges.Select(g => Xy(g.AngleDeg, Math.Max(0, offset + g.ChangeMicro!.Value)).Y).ToArray();
            var points = plot.Add.ScatterPoints(gx, gy);
            points.Color = Colors.Black;
            points.MarkerSize = 9;
            points.LegendText = "gauge change since baseline";
            foreach (var g in gauges)
            {
                var (tx, ty) = Xy(g.AngleDeg, Math.Max(0, offset + g.ChangeMicro!.Value) + (0.12 * extent));
                var name = plot.Add.Text(g.Sensor, tx, ty);
                name.LabelFontSize = 11;
                name.LabelFontColor = Colors.DimGray;
                name.LabelAlignment = Alignment.MiddleCenter;
            }
        }

        var (ax, ay) = Xy(pattern.DirectionDeg, outer * 0.95);
        var arrow = plot.Add.Arrow(new Coordinates(0, 0), new Coordinates(ax, ay));
        arrow.ArrowFillColor = DirectionColor;
        arrow.ArrowLineColor = DirectionColor;
        arrow.ArrowLineWidth = 0;
        arrow.ArrowWidth = 4;
        arrow.ArrowheadWidth = 18;
        arrow.ArrowheadLength = 22;
        arrow.LegendText = $"load rose most toward {pattern.DirectionDeg:0}°";
        var centre = plot.Add.Marker(0, 0, MarkerShape.FilledCircle, 14);
        centre.Color = CentreColor;

        // No Cartesian axes, ticks or grid; the title stays.
        plot.HideGrid();
        plot.Axes.Frame(false);
        plot.Axes.Bottom.TickLabelStyle.IsVisible = false;
        plot.Axes.Left.TickLabelStyle.IsVisible = false;
        plot.Axes.Bottom.MajorTickStyle.Length = 0;
        plot.Axes.Bottom.MinorTickStyle.Length = 0;
        plot.Axes.Left.MajorTickStyle.Length = 0;
        plot.Axes.Left.MinorTickStyle.Length = 0;
        plot.Axes.SetLimits(-outer * 1.25, outer * 1.25, -outer * 1.45, outer * 1.2);
        plot.Title($"Ring {ring.Ring} ({ring.Kind}) at A1/A0 = {pattern.A1Ratio:0.000}, {ReviewedEvent.Time(pattern.AtMs)}", 15);
        plot.Axes.SquareUnits();
        plot.ShowLegend(Alignment.LowerRight);
        return Render(plot, "ring-pattern-" + ring.Ring, $"Ring {ring.Ring} at the moment of peak asymmetry",
            $"Change of the ring's load since the pre-discharge baseline ({(ring.Kind == "hoop" ? "hoop tension" : "axial compression")} positive), at its largest A1/A0. " +
            $"Radius = {offset:0.#} microstrain + change (dashed circle: no change; rings at ±{extent:0.#}). 0° is the silo's reference mark, angles clockwise seen from above. " +
            $"The red arrow points where the load rose most ({pattern.DirectionDeg:0}°); a low-pressure flow channel usually lies on the other side (common practice, no source).",
            width, height);
    }

    /// <summary>Expected wall loads with height for the mass at the start (filling and discharge), and each ring's measured peak.</summary>
    public static RenderedPlot LoadsWithDepth(ReviewedEvent e, DischargeEventDetails d, int width, int height)
    {
        ArgumentNullException.ThrowIfNull(e);
        ArgumentNullException.ThrowIfNull(d);
        var plot = NewPlot($"Measured against expected wall loads, {e.SiloKey}", "membrane force, kN/m", "height above the transition, m");
        var h = d.ExpectedProfile.Select(p => p.HeightM).ToArray();
        Series(plot, d.ExpectedProfile.Select(p => p.DischargeAxialKnPerM).ToArray(), h, Colors.FireBrick, LinePattern.Solid, "expected n_z, discharge");
        Series(plot, d.ExpectedProfile.Select(p => p.FillingAxialKnPerM).ToArray(), h, Colors.FireBrick, LinePattern.Dashed, "expected n_z, filling");
        if (d.ExpectedProfile.Any(p => p.DischargeHoopKnPerM is not null))
        {
            Series(plot, d.ExpectedProfile.Select(p => p.DischargeHoopKnPerM ?? double.NaN).ToArray(), h, Colors.SteelBlue, LinePattern.Solid, "expected n_θ, discharge");
            Series(plot, d.ExpectedProfile.Select(p => p.FillingHoopKnPerM ?? double.NaN).ToArray(), h, Colors.SteelBlue, LinePattern.Dashed, "expected n_θ, filling");
        }

        foreach (var ring in d.Rings.Where(r => r.PeakForceKnPerM is not null))
        {
            var color = ring.Kind == "hoop" ? Colors.SteelBlue : Colors.FireBrick;
            var measured = plot.Add.Marker(ring.PeakForceKnPerM!.Value, ring.HeightM, MarkerShape.FilledDiamond, 14);
            measured.Color = color;
            measured.LegendText = $"ring {ring.Ring}: measured peak";
            if (ring.ExpectedForceAtPeakKnPerM is { } expected)
            {
                var at = plot.Add.Marker(expected, ring.HeightM, MarkerShape.OpenDiamond, 14);
                at.Color = color;
                at.LegendText = $"ring {ring.Ring}: expected at that moment";
            }
        }

        plot.ShowLegend(Alignment.UpperRight);
        return Render(plot, "loads-depth", "Measured against expected loads with depth",
            $"Expected membrane forces (Janssen with mean properties; discharge with C_h = {d.Factors.HorizontalCh:0.00}, C_w = {d.Factors.FrictionCw:0.00}) for the mass at the start, " +
            "and each ring's highest measured load (filled) beside the expected discharge load for the mass at that moment (open). Characteristic values for monitoring, not a design check.",
            width, height);
    }

    private static Plot NewPlot(string title, string x, string y)
    {
        var plot = new Plot();
        plot.Title(title);
        plot.XLabel(x);
        plot.YLabel(y);
        return plot;
    }

    private static RenderedPlot Render(Plot plot, string id, string title, string caption, int width, int height) =>
        new(id, title, caption, plot.GetImageBytes(width, height, ImageFormat.Png), width, height);

    private static double[] Minutes(ReviewedEvent e, EventCapture capture) =>
        [.. capture.Frames.Select(f => (f.TimestampMs - e.Record.StartedMs) / 60_000.0)];

    private static double[] Scale(double[] values, double factor) => [.. values.Select(v => v * factor)];

    // A line through the finite points only.
    private static ScottPlot.Plottables.Scatter AddLine(Plot plot, double[] x, double[] y, Color color, string legend)
    {
        var keep = Enumerable.Range(0, Math.Min(x.Length, y.Length)).Where(i => double.IsFinite(x[i]) && double.IsFinite(y[i])).ToArray();
        var line = plot.Add.ScatterLine(keep.Select(i => x[i]).ToArray(), keep.Select(i => y[i]).ToArray());
        line.Color = color;
        line.LineWidth = 1.5f;
        line.LegendText = legend;
        return line;
    }

    private static void Series(Plot plot, double[] x, double[] y, Color color, LinePattern pattern, string legend)
    {
        var line = AddLine(plot, x, y, color, legend);
        line.LinePattern = pattern;
        line.LineWidth = 2;
    }

    private static void MarkStartAndEnd(Plot plot, ReviewedEvent e)
    {
        var start = plot.Add.VerticalLine(0);
        start.LinePattern = LinePattern.Dashed;
        start.Color = Colors.Gray;
        start.LineWidth = 1;
        if (e.Record.EndedMs is { } end)
        {
            var stop = plot.Add.VerticalLine((end - e.Record.StartedMs) / 60_000.0);
            stop.LinePattern = LinePattern.Dashed;
            stop.Color = Colors.Gray;
            stop.LineWidth = 1;
        }
    }

    // Angle clockwise from the top (the reference mark), seen from above.
    private static (double X, double Y) Xy(double angleDeg, double radius)
    {
        var t = angleDeg * Math.PI / 180.0;
        return (radius * Math.Sin(t), radius * Math.Cos(t));
    }
}
