using System.Globalization;
using ForceFit.Core.Constants;

namespace ForceFit.Core.Units;

/// <summary>A measured value with its standard uncertainty (k = 1), both in SI units of <see cref="Dimension"/>.</summary>
/// <param name="Value">The value in SI.</param>
/// <param name="Sigma">The standard uncertainty in SI; 0 for an exact or stated-without-uncertainty value.</param>
/// <param name="Dimension">The dimension of the value.</param>
public readonly record struct Measurement(double Value, double Sigma, Dimension Dimension)
{
    /// <summary>A value with no stated uncertainty.</summary>
    public static Measurement Exact(double value, Dimension dimension) => new(value, 0.0, dimension);

    /// <summary>Sigma divided by |value| (infinity for a zero value with non-zero sigma).</summary>
    public double RelativeSigma => Sigma == 0 ? 0 : Sigma / Math.Abs(Value);

    /// <summary>Formats as "value ± sigma unit" in SI, with round-trip digits.</summary>
    public override string ToString() => Format(Unit.SiOf(Dimension));

    /// <summary>Formats in the given unit with round-trip digits; the result parses back to this measurement.</summary>
    /// <param name="unit">A unit of this dimension (or an energy unit for an angular frequency).</param>
    public string Format(Unit unit)
    {
        double factor = QuantityParser.ConversionFactor(unit.Dimension, Dimension)
            ?? throw new ArgumentException($"unit '{unit.Symbol}' cannot express {Dimension.Describe()}", nameof(unit));
        string value = RoundTrip(Value / factor, unit);
        string text = Sigma == 0 ? value : value + " ± " + RoundTrip(Sigma / factor, unit);
        return unit.Symbol.Length == 0 ? text : text + " " + unit.Symbol;
    }

    /// <summary>
    /// The shortest round-trip decimal of an SI value, written in a unit: for units that are 10^n of SI the decimal
    /// exponent of the text is shifted (exact, so "148.7 um" formats back as 148.7); otherwise the value is divided.
    /// </summary>
    private static string RoundTrip(double si, Unit unit)
    {
        if (unit.DecimalExponent is not int shift || shift == 0 || si == 0 || !double.IsFinite(si))
            return unit.FromSiValue(si).ToString("R", CultureInfo.InvariantCulture);
        string r = si.ToString("R", CultureInfo.InvariantCulture);
        bool negative = r[0] == '-';
        if (negative) r = r[1..];
        int exponent = 0;
        int e = r.IndexOfAny(['E', 'e']);
        if (e >= 0)
        {
            exponent = int.Parse(r[(e + 1)..], NumberStyles.AllowLeadingSign, CultureInfo.InvariantCulture);
            r = r[..e];
        }
        int dot = r.IndexOf('.');
        string digits = dot >= 0 ? r.Remove(dot, 1) : r;
        int k = dot >= 0 ? exponent - (r.Length - dot - 1) : exponent; // value = digits x 10^k
        digits = digits.TrimStart('0');
        while (digits.EndsWith('0')) { digits = digits[..^1]; k++; }
        k -= shift;
        string text;
        int n = digits.Length;
        if (k >= 0 && n + k <= 21) text = digits + new string('0', k);
        else if (k < 0 && -k < n) text = digits[..(n + k)] + "." + digits[(n + k)..];
        else if (k < 0 && -k - n < 6) text = "0." + new string('0', -k - n) + digits;
        else text = digits[0] + (n > 1 ? "." + digits[1..] : "") + "E" + (k + n - 1).ToString(CultureInfo.InvariantCulture);
        return negative ? "-" + text : text;
    }

    /// <summary>Formats in the unit with this symbol.</summary>
    public string Format(string unitSymbol) =>
        Format(unitSymbol.Length == 0 ? UnitTable.Dimensionless : UnitTable.Find(unitSymbol)
            ?? throw new ArgumentException($"unknown unit '{unitSymbol}'", nameof(unitSymbol)));

    /// <summary>Formats with a fixed number of significant digits for tables shown to people.</summary>
    public string Display(string unitSymbol, int digits = 4)
    {
        Unit unit = unitSymbol.Length == 0 ? UnitTable.Dimensionless : UnitTable.Find(unitSymbol)!;
        double factor = QuantityParser.ConversionFactor(unit.Dimension, Dimension) ?? double.NaN;
        string f = "G" + digits.ToString(CultureInfo.InvariantCulture);
        string value = unit.FromSiValue(Value / factor).ToString(f, CultureInfo.InvariantCulture);
        string text = Sigma == 0 ? value : value + " ± " + unit.FromSiValue(Sigma / factor).ToString("G2", CultureInfo.InvariantCulture);
        return unit.Symbol.Length == 0 ? text : text + " " + unit.Symbol;
    }
}

/// <summary>Converts between photon energy and angular frequency with CODATA 2018 hbar.</summary>
public static class PhotonEnergy
{
    /// <summary>omega = E / hbar for an energy in eV.</summary>
    public static double ElectronVoltsToRadiansPerSecond(double electronVolts) =>
        electronVolts * Codata2018.ElectronVoltAngularFrequency.Value;

    /// <summary>E = hbar omega, in eV.</summary>
    public static double RadiansPerSecondToElectronVolts(double radiansPerSecond) =>
        radiansPerSecond / Codata2018.ElectronVoltAngularFrequency.Value;
}
