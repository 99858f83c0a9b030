using ForceFit.Core.Constants;

namespace ForceFit.Core.Units;

/// <summary>A unit symbol, its dimension and the factor that converts a value in it to SI.</summary>
/// <param name="Symbol">The symbol as written in run files, e.g. "nm".</param>
/// <param name="Dimension">The dimension of the unit.</param>
/// <param name="ToSi">Multiply a value in this unit by this to get SI.</param>
public sealed record Unit(string Symbol, Dimension Dimension, double ToSi)
{
    /// <summary>n when the unit is exactly 10^n times the SI unit (nm: −9), else null.</summary>
    public int? DecimalExponent { get; } = ToSi > 0 && Math.Abs(Math.Log10(ToSi) - Math.Round(Math.Log10(ToSi))) < 1e-12
        ? (int)Math.Round(Math.Log10(ToSi)) : null;

    /// <summary>A value in this unit converted to SI.</summary>
    public double ToSiValue(double value) => DecimalExponent is int n && n < 0 ? value / Math.Pow(10, -n) : value * ToSi;

    /// <summary>An SI value expressed in this unit.</summary>
    public double FromSiValue(double si) => DecimalExponent is int n && n < 0 ? si * Math.Pow(10, -n) : si / ToSi;

    /// <summary>The SI unit of each dimension, used when formatting without a chosen unit.</summary>
    public static Unit SiOf(Dimension dimension) => dimension switch
    {
        Dimension.Dimensionless => UnitTable.Dimensionless,
        Dimension.Length => UnitTable.Find("m")!,
        Dimension.Time => UnitTable.Find("s")!,
        Dimension.Frequency => UnitTable.Find("Hz")!,
        Dimension.Voltage => UnitTable.Find("V")!,
        Dimension.Temperature => UnitTable.Find("K")!,
        Dimension.SpringConstant => UnitTable.Find("N/m")!,
        Dimension.Energy => UnitTable.Find("J")!,
        Dimension.EnergySquared => UnitTable.Find("J^2")!,
        Dimension.AngularFrequency => UnitTable.Find("rad/s")!,
        Dimension.AngularFrequencySquared => UnitTable.Find("rad^2/s^2")!,
        Dimension.LengthPerVoltage => UnitTable.Find("m/V")!,
        _ => throw new ArgumentOutOfRangeException(nameof(dimension)),
    };
}

/// <summary>Every unit ForceFit accepts (run-files.md, section Quantities, plus a few of the same kind).</summary>
public static class UnitTable
{
    /// <summary>The unit of a pure number (written as nothing).</summary>
    public static readonly Unit Dimensionless = new("", Dimension.Dimensionless, 1.0);

    private static readonly double ElectronVolt = Codata2018.ElementaryCharge.Value; // 1 eV = e J (exact, SI 2019)

    private static readonly Unit[] All =
    [
        new("m", Dimension.Length, 1.0),
        new("mm", Dimension.Length, 1e-3),
        new("um", Dimension.Length, 1e-6),
        new("µm", Dimension.Length, 1e-6), // U+00B5 micro sign
        new("μm", Dimension.Length, 1e-6), // U+03BC Greek mu
        new("nm", Dimension.Length, 1e-9),
        new("pm", Dimension.Length, 1e-12),
        new("s", Dimension.Time, 1.0),
        new("ms", Dimension.Time, 1e-3),
        new("us", Dimension.Time, 1e-6),
        new("µs", Dimension.Time, 1e-6),
        new("μs", Dimension.Time, 1e-6),
        new("ns", Dimension.Time, 1e-9),
        new("Hz", Dimension.Frequency, 1.0),
        new("kHz", Dimension.Frequency, 1e3),
        new("MHz", Dimension.Frequency, 1e6),
        new("mHz", Dimension.Frequency, 1e-3),
        new("V", Dimension.Voltage, 1.0),
        new("mV", Dimension.Voltage, 1e-3),
        new("uV", Dimension.Voltage, 1e-6),
        new("µV", Dimension.Voltage, 1e-6),
        new("μV", Dimension.Voltage, 1e-6),
        new("K", Dimension.Temperature, 1.0),
        new("mK", Dimension.Temperature, 1e-3),
        new("N/m", Dimension.SpringConstant, 1.0),
        new("mN/m", Dimension.SpringConstant, 1e-3),
        new("J", Dimension.Energy, 1.0),
        new("eV", Dimension.Energy, ElectronVolt),
        new("meV", Dimension.Energy, 1e-3 * ElectronVolt),
        new("J^2", Dimension.EnergySquared, 1.0),
        new("eV^2", Dimension.EnergySquared, ElectronVolt * ElectronVolt),
        new("rad/s", Dimension.AngularFrequency, 1.0),
        new("rad^2/s^2", Dimension.AngularFrequencySquared, 1.0),
        new("m/V", Dimension.LengthPerVoltage, 1.0),
        new("um/V", Dimension.LengthPerVoltage, 1e-6),
        new("nm/V", Dimension.LengthPerVoltage, 1e-9),
        new("nm/mV", Dimension.LengthPerVoltage, 1e-6),
    ];

    private static readonly Dictionary<string, Unit> BySymbol = All.ToDictionary(u => u.Symbol, StringComparer.Ordinal);

    /// <summary>The unit with this exact (case-sensitive) symbol, or null.</summary>
    public static Unit? Find(string symbol) => BySymbol.GetValueOrDefault(symbol);

    /// <summary>All symbols of a dimension.</summary>
    public static IEnumerable<Unit> OfDimension(Dimension dimension) => All.Where(u => u.Dimension == dimension);

    /// <summary>All known units.</summary>
    public static IReadOnlyList<Unit> Units => All;
}
