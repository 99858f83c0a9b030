using System.Globalization;
using System.Text.RegularExpressions;
using ForceFit.Core.Constants;
using ForceFit.Core.Problems;

namespace ForceFit.Core.Units;

/// <summary>
/// Reads "value ± sigma unit", "value +/- sigma unit" and "value unit" (run-files.md, section Quantities)
/// into a <see cref="Measurement"/> in SI.
/// </summary>
public static partial class QuantityParser
{
    private const string Number = @"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?";

    [GeneratedRegex(@"^\s*(?<value>" + Number + @")\s*(?:(?:±|\+/-|\+-)\s*(?<sigma>" + Number + @")\s*)?(?<unit>\S.*?)?\s*$",
        RegexOptions.CultureInvariant)]
    private static partial Regex QuantityPattern();

    /// <summary>
    /// The factor that turns an SI value of <paramref name="from"/> into an SI value of <paramref name="to"/>,
    /// or null when the two cannot be converted. Photon energies become angular frequencies by omega = E/hbar.
    /// </summary>
    public static double? ConversionFactor(Dimension from, Dimension to)
    {
        if (from == to) return 1.0;
        double hbar = Codata2018.ReducedPlanck.Value;
        return (from, to) switch
        {
            (Dimension.Energy, Dimension.AngularFrequency) => 1.0 / hbar,
            (Dimension.EnergySquared, Dimension.AngularFrequencySquared) => 1.0 / (hbar * hbar),
            _ => null,
        };
    }

    /// <summary>Parses a quantity; on failure returns false and a message that says what is wrong with the text.</summary>
    /// <param name="text">The text, e.g. "148.7 ± 0.2 um".</param>
    /// <param name="expected">The dimension the value must have.</param>
    /// <param name="result">The measurement in SI.</param>
    /// <param name="error">Why the text is not a quantity of that dimension.</param>
    public static bool TryParse(string? text, Dimension expected, out Measurement result, out string error)
    {
        result = default;
        error = "";
        string hint = expected == Dimension.Dimensionless
            ? "a dimensionless number is expected"
            : $"{expected.Describe()} is expected ({expected.ExampleUnits()})";
        if (string.IsNullOrWhiteSpace(text))
        {
            error = $"the value is empty; {hint}";
            return false;
        }
        Match match = QuantityPattern().Match(text);
        if (!match.Success)
        {
            error = $"'{text}' is not a quantity; write \"value unit\" or \"value ± sigma unit\"";
            return false;
        }
        double value = double.Parse(match.Groups["value"].Value, NumberStyles.Float, CultureInfo.InvariantCulture);
        double sigma = match.Groups["sigma"].Success
            ? double.Parse(match.Groups["sigma"].Value, NumberStyles.Float, CultureInfo.InvariantCulture)
            : 0.0;
        if (!double.IsFinite(value) || !double.IsFinite(sigma))
        {
            error = $"'{text}' is not a finite number";
            return false;
        }
        if (sigma < 0 || (sigma == 0 && match.Groups["sigma"].Value.StartsWith('-')))
        {
            error = $"'{text}' has a negative uncertainty";
            return false;
        }
        string symbol = match.Groups["unit"].Success ? match.Groups["unit"].Value : "";
        if (symbol.Length == 0)
        {
            if (expected == Dimension.Dimensionless)
            {
                result = new Measurement(value, sigma, expected);
                return true;
            }
            error = $"'{text}' has no unit; {hint}";
            return false;
        }
        Unit? unit = UnitTable.Find(symbol);
        if (unit is null)
        {
            Unit? nearCase = UnitTable.Units.FirstOrDefault(u => string.Equals(u.Symbol, symbol, StringComparison.OrdinalIgnoreCase));
            string suggestion = nearCase is null ? "" : $" (did you mean '{nearCase.Symbol}'?)";
            error = $"unknown unit '{symbol}' in '{text}'{suggestion}; {hint}";
            return false;
        }
        double? factor = ConversionFactor(unit.Dimension, expected);
        if (factor is null)
        {
            error = expected == Dimension.Dimensionless
                ? $"'{text}' has a unit, but a dimensionless number is expected"
                : $"'{text}' is {unit.Dimension.Describe()}, but {hint}";
            return false;
        }
        result = new Measurement(ToSi(match.Groups["value"].Value, value, unit) * factor.Value,
            match.Groups["sigma"].Success ? ToSi(match.Groups["sigma"].Value, sigma, unit) * factor.Value : 0.0, expected);
        return true;
    }

    /// <summary>
    /// A decimal number in a unit that is a power of ten of SI is converted by shifting its decimal exponent and
    /// parsing once, which rounds correctly ("148.7 um" gives the double nearest 1.487e-4); other units multiply.
    /// </summary>
    private static double ToSi(string digits, double parsed, Unit unit)
    {
        if (unit.DecimalExponent is not int shift || shift == 0) return unit.ToSiValue(parsed);
        int e = digits.IndexOfAny(['e', 'E']);
        string mantissa = e < 0 ? digits : digits[..e];
        int exponent = e < 0 ? 0 : int.Parse(digits[(e + 1)..], NumberStyles.AllowLeadingSign, CultureInfo.InvariantCulture);
        return double.Parse(mantissa + "e" + (exponent + shift).ToString(CultureInfo.InvariantCulture), NumberStyles.Float, CultureInfo.InvariantCulture);
    }

    /// <summary>Parses a quantity or throws an <see cref="InputException"/> naming the key and the file.</summary>
    public static Measurement Parse(string? text, Dimension expected, string key, string file)
    {
        if (TryParse(text, expected, out Measurement result, out string error)) return result;
        throw new InputException(new Problem(file, null, $"{key}: {error}"));
    }
}
