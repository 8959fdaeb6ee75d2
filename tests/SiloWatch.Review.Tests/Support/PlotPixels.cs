using SkiaSharp;

namespace SiloWatch.Review.Tests.Support;

/// <summary>Reads a rendered plot back as pixels (SkiaSharp), to check it shows something and where its marks are.</summary>
public sealed class PlotPixels : IDisposable
{
    private readonly SKBitmap _bitmap;

    public PlotPixels(byte[] png)
    {
        _bitmap = SKBitmap.Decode(png) ?? throw new InvalidDataException("not a decodable image");
    }

    public int Width => _bitmap.Width;

    public int Height => _bitmap.Height;

    public static PlotPixels FromDataUri(string src)
    {
        const string prefix = "data:image/png;base64,";
        if (!src.StartsWith(prefix, StringComparison.Ordinal))
        {
            throw new InvalidDataException($"not an embedded PNG: {src[..Math.Min(40, src.Length)]}");
        }

        return new PlotPixels(Convert.FromBase64String(src[prefix.Length..]));
    }

    /// <summary>How many distinct colours the image has (a blank image has one).</summary>
    public int DistinctColours()
    {
        var seen = new HashSet<uint>();
        for (var y = 0; y < Height; y += 2)
        {
            for (var x = 0; x < Width; x += 2)
            {
                seen.Add((uint)_bitmap.GetPixel(x, y));
            }
        }

        return seen.Count;
    }

    /// <summary>Share of pixels in a band of rows [fromRow, toRow) that are dark (text, lines): labels rendered with a font show up here.</summary>
    public double DarkShare(int fromRow, int toRow, int fromColumn = 0, int toColumn = int.MaxValue)
    {
        toColumn = Math.Min(toColumn, Width);
        long dark = 0, all = 0;
        for (var y = Math.Max(0, fromRow); y < Math.Min(toRow, Height); y++)
        {
            for (var x = Math.Max(0, fromColumn); x < toColumn; x++)
            {
                var c = _bitmap.GetPixel(x, y);
                all++;
                if (c.Red + c.Green + c.Blue < 200)
                {
                    dark++;
                }
            }
        }

        return all == 0 ? 0 : (double)dark / all;
    }

    /// <summary>Centroid of the pixels near a colour, or null when there are none.</summary>
    public (double X, double Y, int Count)? Centroid(byte r, byte g, byte b, int tolerance = 40)
    {
        double sx = 0, sy = 0;
        var n = 0;
        for (var y = 0; y < Height; y++)
        {
            for (var x = 0; x < Width; x++)
            {
                var c = _bitmap.GetPixel(x, y);
                if (Math.Abs(c.Red - r) <= tolerance && Math.Abs(c.Green - g) <= tolerance && Math.Abs(c.Blue - b) <= tolerance)
                {
                    sx += x;
                    sy += y;
                    n++;
                }
            }
        }

        return n == 0 ? null : (sx / n, sy / n, n);
    }

    /// <summary>
    /// The direction the ring pattern's arrow points: from the centre mark's centroid to the arrow's,
    /// in degrees clockwise from the top of the image (the plot puts the reference mark at the top).
    /// </summary>
    public double ArrowDirectionDeg()
    {
        var centre = Centroid(ReportPlots.CentreColor.R, ReportPlots.CentreColor.G, ReportPlots.CentreColor.B) ?? throw new InvalidDataException("no centre mark in the image");
        var arrow = Centroid(ReportPlots.DirectionColor.R, ReportPlots.DirectionColor.G, ReportPlots.DirectionColor.B) ?? throw new InvalidDataException("no direction arrow in the image");
        var deg = Math.Atan2(arrow.X - centre.X, centre.Y - arrow.Y) * 180 / Math.PI;
        return (deg + 360) % 360;
    }

    public static double AngleBetween(double a, double b)
    {
        var d = Math.Abs(((a - b) % 360 + 360) % 360);
        return Math.Min(d, 360 - d);
    }

    public void Dispose() => _bitmap.Dispose();
}
