using ForceFit.Core.Units;

namespace ForceFit.Core.Tests.Units;

/// <summary>Formatting back to text round-trips through the parser.</summary>
public sealed class MeasurementFormatTests
{
    private static readonly string[] Symbols = ["m", "mm", "um", "nm", "pm", "s", "ms", "us", "Hz", "kHz", "MHz", "V", "mV", "uV", "K", "N/m", "eV", "meV", "rad/s"];

    [Test]
    public void Formatting_in_SI_round_trips_exactly()
    {
        var random = new Random(20261201);
        foreach (Dimension d in Enum.GetValues<Dimension>())
        {
            for (int i = 0; i < 200; i++)
            {
                double value = (random.NextDouble() - 0.3) * Math.Pow(10, random.Next(-20, 20));
                double sigma = random.NextDouble() * Math.Abs(value) * 0.1;
                var m = new Measurement(value, sigma, d);
                Measurement back = QuantityParser.Parse(m.ToString(), d, "k", "f");
                Assert.That(back, Is.EqualTo(m), m.ToString());
            }
        }
    }

    [Test]
    public void Formatting_in_any_unit_round_trips_to_the_last_bits()
    {
        var random = new Random(7);
        foreach (string symbol in Symbols)
        {
            Unit unit = UnitTable.Find(symbol)!;
            Dimension d = unit.Dimension == Dimension.Energy && symbol != "J" ? Dimension.AngularFrequency : unit.Dimension;
            for (int i = 0; i < 100; i++)
            {
                var m = new Measurement(random.NextDouble() * 1e3 * unit.ToSi, random.NextDouble() * unit.ToSi, d);
                string text = m.Format(unit);
                Measurement back = QuantityParser.Parse(text, d, "k", "f");
                if (unit.DecimalExponent is not null)
                {
                    // Units that are powers of ten of SI round-trip exactly (decimal exponent shifted in the text).
                    Assert.That(back, Is.EqualTo(m), text);
                    continue;
                }
                Assert.That(back.Value, Is.EqualTo(m.Value).Within(4e-16 * Math.Abs(m.Value)), text);
                Assert.That(back.Sigma, Is.EqualTo(m.Sigma).Within(4e-16 * Math.Abs(m.Sigma)), text);
            }
        }
    }

    [Test]
    public void Text_keeps_its_digits()
    {
        Measurement m = QuantityParser.Parse("148.7 ± 0.2 um", Dimension.Length, "k", "f");
        Assert.That(m.Format("um"), Is.EqualTo("148.7 ± 0.2 um"));
        Assert.That(QuantityParser.Parse("9 eV", Dimension.AngularFrequency, "k", "f").Format("eV"), Is.EqualTo("9 eV"));
    }
}

/// <summary>Decimal inputs in sub-units land on the double nearest the decimal SI value.</summary>
public sealed class DecimalConversionTests
{
    [TestCase("100 nm", "1E-07")]
    [TestCase("300 nm", "3E-07")]
    [TestCase("148.7 um", "0.0001487")]
    [TestCase("2.5 mm", "0.0025")]
    [TestCase("20 mV", "0.02")]
    [TestCase("0.3 ms", "0.0003")]
    public void Sub_units_convert_with_correct_rounding(string text, string si)
    {
        // The expected value is the decimal number parsed directly as SI: IEEE 754 correct rounding of both.
        Dimension d = text.EndsWith("mV") ? Dimension.Voltage : text.EndsWith("ms") ? Dimension.Time : Dimension.Length;
        double expected = double.Parse(si, System.Globalization.CultureInfo.InvariantCulture);
        Assert.That(QuantityParser.Parse(text, d, "k", "f").Value, Is.EqualTo(expected));
    }
}
