using System.Globalization;
using System.Text.RegularExpressions;
using ForceFit.Tests.Shared;

namespace ForceFit.Fitting.Tests;

/// <summary>One NIST StRD regression file: data, starting values and certified results.</summary>
internal sealed record NistDataset(string Name, double[] Y, double[][] X, double[][] Starts, double[] Certified, double[] CertifiedSd,
    double ResidualSumOfSquares, double ResidualSd, int DegreesOfFreedom);

/// <summary>
/// Reads the NIST Statistical Reference Datasets as published (../shared/reference-data/nist-strd; NIST ITL,
/// https://www.itl.nist.gov/div898/strd/): the line ranges from each file's own header, certified values as printed.
/// </summary>
internal static partial class NistStrd
{
    public static string Folder => Path.Combine(RepoPaths.SharedReferenceData, "nist-strd");

    [GeneratedRegex(@"Data\s+\(lines\s+(\d+)\s+to\s+(\d+)\)")]
    private static partial Regex DataLines();

    [GeneratedRegex(@"^\s*b(\d+)\s*=\s*(\S+)\s+(\S+)\s+(\S+)\s+(\S+)\s*$")]
    private static partial Regex NonlinearParameter();

    [GeneratedRegex(@"^\s*B(\d+)\s+(\S+)\s+(\S+)\s*$")]
    private static partial Regex LinearParameter();

    private static double D(string s) => double.Parse(s, NumberStyles.Float, CultureInfo.InvariantCulture);

    public static NistDataset Read(string name)
    {
        string[] lines = File.ReadAllLines(Path.Combine(Folder, name + ".dat")).Select(l => l.TrimEnd('\r')).ToArray();
        string all = string.Join("\n", lines);
        Match data = DataLines().Match(all);
        int first = int.Parse(data.Groups[1].Value, CultureInfo.InvariantCulture), last = int.Parse(data.Groups[2].Value, CultureInfo.InvariantCulture);
        var rows = lines[(first - 1)..last].Where(l => l.Trim().Length > 0)
            .Select(l => l.Split(' ', StringSplitOptions.RemoveEmptyEntries).Select(D).ToArray()).ToArray();
        double[] y = rows.Select(r => r[0]).ToArray();
        double[][] x = rows.Select(r => r[1..]).ToArray();
        var starts = new List<double[]>();
        var certified = new List<double>();
        var sd = new List<double>();
        var s1 = new List<double>();
        var s2 = new List<double>();
        foreach (string l in lines)
        {
            Match m = NonlinearParameter().Match(l);
            if (m.Success)
            {
                s1.Add(D(m.Groups[2].Value)); s2.Add(D(m.Groups[3].Value));
                certified.Add(D(m.Groups[4].Value)); sd.Add(D(m.Groups[5].Value));
                continue;
            }
            Match lin = LinearParameter().Match(l);
            if (lin.Success && !l.Contains('=', StringComparison.Ordinal))
            {
                certified.Add(D(lin.Groups[2].Value));
                sd.Add(D(lin.Groups[3].Value));
            }
        }
        if (s1.Count > 0) { starts.Add(s1.ToArray()); starts.Add(s2.ToArray()); }
        double rss = Value(lines, "Residual Sum of Squares");
        double rsd = Value(lines, "Residual Standard Deviation");
        if (double.IsNaN(rsd)) rsd = Value(lines, "Standard Deviation", "Residual");
        int dof = (int)Value(lines, "Degrees of Freedom");
        return new NistDataset(name, y, x, starts.ToArray(), certified.ToArray(), sd.ToArray(), rss, rsd, dof);
    }

    private static double Value(string[] lines, string label, string? previousLine = null)
    {
        for (int i = 0; i < lines.Length; i++)
        {
            string l = lines[i];
            int at = l.IndexOf(label, StringComparison.Ordinal);
            if (at < 0) continue;
            if (previousLine is not null && (i == 0 || !lines[i - 1].Contains(previousLine, StringComparison.Ordinal))) continue;
            string rest = l[(at + label.Length)..].Trim().TrimStart(':').Trim();
            string token = rest.Split(' ', StringSplitOptions.RemoveEmptyEntries).FirstOrDefault() ?? "";
            if (double.TryParse(token, NumberStyles.Float, CultureInfo.InvariantCulture, out double v)) return v;
        }
        return double.NaN;
    }

    /// <summary>Number of significant digits that agree: −log10(|a − c| / |c|) (NIST's LRE), capped at 15.</summary>
    public static double Lre(double value, double certified) =>
        value == certified ? 15 : Math.Min(15, -Math.Log10(Math.Abs(value - certified) / Math.Abs(certified == 0 ? 1 : certified)));
}
