using System.Text;
using ScottPlot;

namespace ForceFit.Reporting.Figures;

/// <summary>One figure of the report, rendered.</summary>
/// <param name="Name">File name without extension (figures/&lt;name&gt;.svg and .png).</param>
/// <param name="Title">Heading in the report.</param>
/// <param name="Caption">What the figure shows, in one or two sentences.</param>
/// <param name="Svg">The SVG document.</param>
/// <param name="Png">The PNG image.</param>
public sealed record Figure(string Name, string Title, string Caption, string Svg, byte[] Png);

/// <summary>
/// ForceFit's own palette: six colours that differ in lightness as well as hue, so that they stay apart for the
/// common forms of colour blindness and in grey print (checked by their lightness steps, not by a borrowed scheme).
/// </summary>
internal static class Palette
{
    /// <summary>Measured data: a dark slate blue.</summary>
    public static readonly Color Data = Color.FromHex("#23395b");

    /// <summary>Series colours for theories, runs and sources, in order.</summary>
    public static readonly Color[] Series =
    [
        Color.FromHex("#c9651b"), // copper
        Color.FromHex("#4a90c8"), // cornflower
        Color.FromHex("#8c3d7c"), // mulberry
        Color.FromHex("#6b8e23"), // moss
        Color.FromHex("#d4a017"), // mustard
        Color.FromHex("#7f7f7f"), // pewter
    ];

    /// <summary>The i-th series colour (repeating).</summary>
    public static Color Of(int i) => Series[((i % Series.Length) + Series.Length) % Series.Length];
}

/// <summary>Shared set-up and rendering of the report's figures.</summary>
internal static class FigureKit
{
    public const int Width = 760;
    public const int Height = 440;

    /// <summary>A new plot with our styling, axis labels and an optional title.</summary>
    public static Plot New(string xLabel, string yLabel, string? title = null)
    {
        var plot = new Plot();
        plot.Axes.Bottom.Label.Text = Safe(xLabel);
        plot.Axes.Left.Label.Text = Safe(yLabel);
        plot.Axes.Bottom.Label.FontSize = 15;
        plot.Axes.Left.Label.FontSize = 15;
        plot.Axes.Bottom.Label.Bold = false;
        plot.Axes.Left.Label.Bold = false;
        if (title is not null) plot.Title(Safe(title), size: 15);
        plot.Grid.MajorLineColor = Color.FromHex("#e3e6ea");
        return plot;
    }

    /// <summary>Labels the right axis in the same style as the left one.</summary>
    public static void RightLabel(Plot plot, string text)
    {
        plot.Axes.Right.Label.Text = Safe(text);
        plot.Axes.Right.Label.FontSize = 15;
        plot.Axes.Right.Label.Bold = false;
    }

    /// <summary>
    /// Log10 axes: the data are plotted as log10 values; ticks sit at 1, 2 and 5 times powers of ten inside the data
    /// range (every digit when that gives fewer than three), labelled with the values themselves.
    /// </summary>
    public static void LogAxes(Plot plot, bool x, bool y, IReadOnlyList<double>? xValues = null, IReadOnlyList<double>? yValues = null)
    {
        if (x && xValues is not null) plot.Axes.Bottom.TickGenerator = LogTicks(xValues);
        if (y && yValues is not null) plot.Axes.Left.TickGenerator = LogTicks(yValues);
    }

    private static ScottPlot.TickGenerators.NumericManual LogTicks(IReadOnlyList<double> values)
    {
        var ticks = new ScottPlot.TickGenerators.NumericManual();
        var positive = values.Where(v => v > 0 && double.IsFinite(v)).ToArray();
        if (positive.Length == 0) return ticks;
        double lo = positive.Min() / 1.15, hi = positive.Max() * 1.15;
        int first = (int)Math.Floor(Math.Log10(lo)), last = (int)Math.Ceiling(Math.Log10(hi));
        IEnumerable<double> Candidates(int[] mantissas) => Enumerable.Range(first, last - first + 1)
            .SelectMany(e => mantissas.Select(m => m * Math.Pow(10, e))).Where(v => v >= lo && v <= hi);
        double[] major = Candidates([1, 2, 5]).ToArray();
        if (major.Length < 3) major = Candidates([1, 2, 3, 4, 5, 6, 7, 8, 9]).ToArray();
        foreach (double v in major) ticks.AddMajor(Math.Log10(v), Label(v));
        foreach (double v in Candidates([1, 2, 3, 4, 5, 6, 7, 8, 9]).Except(major)) ticks.AddMinor(Math.Log10(v));
        return ticks;
    }

    // 1e-5 style for small and large numbers, plain digits otherwise.
    private static string Label(double v)
    {
        if (v >= 0.01 && v < 1e5) return v.ToString("0.##", System.Globalization.CultureInfo.InvariantCulture);
        int e = (int)Math.Floor(Math.Log10(v) + 1e-9);
        double m = v / Math.Pow(10, e);
        return FormattableString.Invariant($"{m:0.#}e{e}");
    }

    /// <summary>log10 of each value; non-positive values become NaN (not drawn).</summary>
    public static double[] Log(IEnumerable<double> values) => values.Select(v => v > 0 ? Math.Log10(v) : double.NaN).ToArray();

    /// <summary>Renders the plot to SVG and PNG.</summary>
    public static Figure Render(Plot plot, string name, string title, string caption, int width = Width, int height = Height)
    {
        string svg = plot.GetSvgXml(width, height);
        byte[] png = plot.GetImageBytes(width, height, ImageFormat.Png);
        return new Figure(name, title, caption, svg, png);
    }

    /// <summary>
    /// Text from the user's files (run names) made safe for an SVG drawn by the plotting library: markup characters are
    /// replaced by look-alikes so that no name can open a tag or an entity inside the report.
    /// </summary>
    public static string Safe(string text)
    {
        var b = new StringBuilder(text.Length);
        foreach (char c in text)
            b.Append(c switch
            {
                '<' => '‹',
                '>' => '›',
                '&' => '+',
                '"' => '\'',
                _ when char.IsControl(c) => ' ',
                _ => c,
            });
        return b.ToString();
    }
}
