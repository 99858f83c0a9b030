using System.Globalization;

namespace ForceFit.Ingest.Streams;

/// <summary>
/// Parses plain decimal numbers ("-12.3456", "7", "1.5e-3") from UTF-8. The common case, at most 19 significant
/// digits and no exponent, is exact: the digits form an integer below 2^63 and one division by an exact power of
/// ten (at most 10^22) rounds correctly when the integer is below 2^53 (W. D. Clinger, PLDI 1990); otherwise the
/// runtime's correctly rounded parser is used.
/// </summary>
public static class FastNumber
{
    private static readonly double[] PowersOfTen = Enumerable.Range(0, 23).Select(i => Math.Pow(10, i)).ToArray();

    /// <summary>Parses a field; false when it is not a number. NaN and infinity parse (the caller rejects them).</summary>
    public static bool TryParse(ReadOnlySpan<byte> s, out double value)
    {
        int i = 0;
        while (i < s.Length && (s[i] == (byte)' ' || s[i] == (byte)'\t')) i++;
        int end = s.Length;
        while (end > i && (s[end - 1] == (byte)' ' || s[end - 1] == (byte)'\t')) end--;
        bool negative = false;
        if (i < end && (s[i] == (byte)'-' || s[i] == (byte)'+'))
        {
            negative = s[i] == (byte)'-';
            i++;
        }
        ulong mantissa = 0;
        int digits = 0, fraction = 0;
        uint d;
        while (i < end && (d = (uint)(s[i] - '0')) <= 9)
        {
            mantissa = mantissa * 10 + d;
            digits++;
            i++;
        }
        if (i < end && s[i] == (byte)'.')
        {
            i++;
            int fractionStart = i;
            while (i < end && (d = (uint)(s[i] - '0')) <= 9)
            {
                mantissa = mantissa * 10 + d;
                digits++;
                i++;
            }
            fraction = i - fractionStart;
        }
        if (i == end && digits > 0 && digits <= 15 && fraction <= 22)
        {
            double v = fraction == 0 ? mantissa : mantissa / PowersOfTen[fraction];
            value = negative ? -v : v;
            return true;
        }
        return double.TryParse(s, NumberStyles.Float, CultureInfo.InvariantCulture, out value);
    }
}
