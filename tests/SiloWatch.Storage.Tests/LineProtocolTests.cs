namespace SiloWatch.Storage.Tests;

public sealed class LineProtocolTests
{
    [Fact]
    public void MeasurementNamesEscapeCommasAndSpacesButNotEqualsSigns()
    {
        Assert.Equal(@"silo\ estimate\,v2=x", LineProtocol.EscapeMeasurement("silo estimate,v2=x"));
    }

    [Fact]
    public void TagKeysTagValuesAndFieldKeysEscapeCommasEqualsSignsAndSpaces()
    {
        Assert.Equal(@"East\ row\,\ bay\=3", LineProtocol.EscapeKey("East row, bay=3"));
        Assert.Equal("plain-id_1", LineProtocol.EscapeKey("plain-id_1"));
    }

    [Fact]
    public void ALineHasTheEscapedPrefixSortedTagsFieldsAndAMillisecondTimestamp()
    {
        var series = new SeriesKey("silo estimate", [new("silo", "S 1"), new("site", "brack,ford"), new("bay", "a=b")], "mass kg", "level_m");

        var line = LineProtocol.FormatLine(series, 1_700_000_000_123, [12345.5, -0.25]);

        Assert.Equal(@"silo\ estimate,bay=a\=b,silo=S\ 1,site=brack\,ford mass\ kg=12345.5,level_m=-0.25 1700000000123", line);
        Assert.Equal(@"bay=a\=b,silo=S\ 1,site=brack\,ford", series.EscapedTagSet);
    }

    [Fact]
    public void NonFiniteValuesAreLeftOutOfTheLine()
    {
        var series = new SeriesKey("m", [], "a", "b", "c");

        Assert.Equal("m b=2 5", LineProtocol.FormatLine(series, 5, [double.NaN, 2, double.PositiveInfinity]));
        Assert.Null(LineProtocol.FormatLine(series, 5, [double.NaN, double.NaN, double.NegativeInfinity]));
    }

    [Fact]
    public void NumbersAreWrittenInTheShortestFormThatReadsBackExactly()
    {
        var series = new SeriesKey("m", [], "v");
        foreach (var v in new[] { 0.1, 1.0 / 3, 1.5e20, 1e-7, -0.0, 123456789.123456789, double.MaxValue })
        {
            var line = LineProtocol.FormatLine(series, 0, [v])!;
            var text = line["m v=".Length..line.LastIndexOf(' ')];
            Assert.Equal(v, double.Parse(text, System.Globalization.CultureInfo.InvariantCulture));
            Assert.DoesNotContain(',', text);
        }
    }

    [Theory]
    [InlineData("line\nbreak")]
    [InlineData("back\\slash")]
    [InlineData("")]
    public void NamesLineProtocolCannotCarryAreRefused(string bad)
    {
        Assert.Throws<ArgumentException>(() => new SeriesKey(bad.Length == 0 ? "m" : bad, [new("site", bad)], "v"));
    }

    [Theory]
    [InlineData("_field")]
    [InlineData("time")]
    public void ReservedTagKeysAndFieldNamesAreRefused(string reserved)
    {
        Assert.Throws<ArgumentException>(() => new SeriesKey("m", [new(reserved, "x")], "v"));
        Assert.Throws<ArgumentException>(() => new SeriesKey("m", [], reserved));
    }

    [Fact]
    public void AMeasurementStartingWithAHashIsRefusedBecauseItWouldReadAsAComment()
    {
        Assert.Throws<ArgumentException>(() => new SeriesKey("#m", [], "v"));
    }

    [Fact]
    public void DuplicateTagsOrFieldsAndSeriesWithoutFieldsAreRefused()
    {
        Assert.Throws<ArgumentException>(() => new SeriesKey("m", [new("a", "1"), new("a", "2")], "v"));
        Assert.Throws<ArgumentException>(() => new SeriesKey("m", [], "v", "v"));
        Assert.Throws<ArgumentException>(() => new SeriesKey("m", [], Array.Empty<string>()));
    }

    [Fact]
    public void TheTagSetParserReadsBackEscapedTags()
    {
        var series = new SeriesKey("m", [new("k 1", "a,b=c d"), new("k2", "plain")], "v");

        var parsed = TagSetParser.Parse(series.EscapedTagSet);

        Assert.Equal([new("k 1", "a,b=c d"), new("k2", "plain")], parsed);
    }
}
