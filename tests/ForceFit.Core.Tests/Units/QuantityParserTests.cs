using ForceFit.Core.Problems;
using ForceFit.Core.Units;

namespace ForceFit.Core.Tests.Units;

/// <summary>
/// The quantity syntax of run-files.md. Expected SI values follow from the SI prefixes
/// (BIPM, The International System of Units, 9th edition (2019), table 7) and 1 eV = e J with
/// e = 1.602176634e-19 C exact (same brochure).
/// </summary>
public sealed class QuantityParserTests
{
    private const double ElectronVolt = 1.602176634e-19; // J, exact (SI 2019)
    private const double Hbar = 6.62607015e-34 / (2 * Math.PI); // J s, h exact (SI 2019)

    [TestCase("1 m", Dimension.Length, 1.0)]
    [TestCase("2.5 mm", Dimension.Length, 2.5e-3)]
    [TestCase("148.7 um", Dimension.Length, 148.7e-6)]
    [TestCase("148.7 µm", Dimension.Length, 148.7e-6)]
    [TestCase("148.7 μm", Dimension.Length, 148.7e-6)]
    [TestCase("100 nm", Dimension.Length, 100e-9)]
    [TestCase("350 pm", Dimension.Length, 350e-12)]
    [TestCase("0.3 s", Dimension.Time, 0.3)]
    [TestCase("300 ms", Dimension.Time, 0.3)]
    [TestCase("40 us", Dimension.Time, 40e-6)]
    [TestCase("40 µs", Dimension.Time, 40e-6)]
    [TestCase("25000 Hz", Dimension.Frequency, 25000.0)]
    [TestCase("25 kHz", Dimension.Frequency, 25e3)]
    [TestCase("1.2 MHz", Dimension.Frequency, 1.2e6)]
    [TestCase("1.5 V", Dimension.Voltage, 1.5)]
    [TestCase("20 mV", Dimension.Voltage, 20e-3)]
    [TestCase("350 uV", Dimension.Voltage, 350e-6)]
    [TestCase("350 µV", Dimension.Voltage, 350e-6)]
    [TestCase("295 K", Dimension.Temperature, 295.0)]
    [TestCase("0.0213 N/m", Dimension.SpringConstant, 0.0213)]
    [TestCase("1000 rad/s", Dimension.AngularFrequency, 1000.0)]
    [TestCase("1.000", Dimension.Dimensionless, 1.0)]
    [TestCase("-0.5", Dimension.Dimensionless, -0.5)]
    [TestCase("  7e-3 s  ", Dimension.Time, 7e-3)]
    [TestCase(".5 nm", Dimension.Length, 0.5e-9)]
    [TestCase("1E2nm", Dimension.Length, 100e-9)]
    public void Reads_each_unit_into_SI(string text, Dimension dimension, double expectedSi)
    {
        Measurement m = QuantityParser.Parse(text, dimension, "key", "file.toml");
        Assert.That(m.Value, Is.EqualTo(expectedSi).Within(1e-13).Percent);
        Assert.That(m.Sigma, Is.Zero);
        Assert.That(m.Dimension, Is.EqualTo(dimension));
    }

    [TestCase("9.0 eV", 9.0)]
    [TestCase("35 meV", 0.035)]
    public void Energies_are_joules(string text, double electronVolts)
    {
        Measurement m = QuantityParser.Parse(text, Dimension.Energy, "key", "file.toml");
        Assert.That(m.Value, Is.EqualTo(electronVolts * ElectronVolt).Within(1e-13).Percent);
    }

    [Test]
    public void A_photon_energy_becomes_an_angular_frequency()
    {
        // omega = E / hbar; physics.md quotes 1 eV / hbar = 1.519 267 447e15 rad/s (CODATA 2018, hbar in eV s).
        Measurement wp = QuantityParser.Parse("9.0 ± 0.05 eV", Dimension.AngularFrequency, "plasma_frequency", "night.toml");
        Assert.That(wp.Value, Is.EqualTo(9.0 * 1.519267447e15).Within(1e-9 * wp.Value));
        Assert.That(wp.Sigma, Is.EqualTo(0.05 * ElectronVolt / Hbar).Within(1e-12).Percent);
    }

    [Test]
    public void An_oscillator_strength_in_eV2_becomes_rad2_per_s2()
    {
        Measurement g = QuantityParser.Parse("7.1 eV^2", Dimension.AngularFrequencySquared, "strength", "night.toml");
        double expected = 7.1 * Math.Pow(ElectronVolt / Hbar, 2);
        Assert.That(g.Value, Is.EqualTo(expected).Within(1e-13).Percent);
    }

    [TestCase("148.7 ± 0.2 um", 148.7e-6, 0.2e-6)]
    [TestCase("148.7 +/- 0.2 um", 148.7e-6, 0.2e-6)]
    [TestCase("148.7±0.2um", 148.7e-6, 0.2e-6)]
    [TestCase("295.0 ± 0.5 K", 295.0, 0.5)]
    [TestCase("1.000 ± 0.002", 1.0, 0.002)]
    public void Reads_the_standard_uncertainty(string text, double value, double sigma)
    {
        Dimension d = text.EndsWith('K') ? Dimension.Temperature : text.EndsWith('m') ? Dimension.Length : Dimension.Dimensionless;
        Measurement m = QuantityParser.Parse(text, d, "key", "f.toml");
        Assert.That(m.Value, Is.EqualTo(value).Within(1e-13).Percent);
        Assert.That(m.Sigma, Is.EqualTo(sigma).Within(1e-13).Percent);
    }

    [TestCase("148.7 kHz", Dimension.Length, "'148.7 kHz' is a frequency, but a length is expected (m, mm, um, nm, pm)")]
    [TestCase("3 nm", Dimension.Frequency, "'3 nm' is a length, but a frequency is expected (Hz, kHz, MHz)")]
    [TestCase("9 eV", Dimension.Length, "'9 eV' is an energy, but a length is expected (m, mm, um, nm, pm)")]
    [TestCase("3 Hz", Dimension.AngularFrequency, "'3 Hz' is a frequency, but an angular frequency is expected (eV, meV, rad/s)")]
    [TestCase("148.7 umm", Dimension.Length, "unknown unit 'umm' in '148.7 umm'; a length is expected (m, mm, um, nm, pm)")]
    [TestCase("100 NM", Dimension.Length, "unknown unit 'NM' in '100 NM' (did you mean 'nm'?); a length is expected (m, mm, um, nm, pm)")]
    [TestCase("148.7", Dimension.Length, "'148.7' has no unit; a length is expected (m, mm, um, nm, pm)")]
    [TestCase("1 ± -0.1 nm", Dimension.Length, "'1 ± -0.1 nm' has a negative uncertainty")]
    [TestCase("1 ± -0 nm", Dimension.Length, "'1 ± -0 nm' has a negative uncertainty")]
    [TestCase("about 3 nm", Dimension.Length, "'about 3 nm' is not a quantity; write \"value unit\" or \"value ± sigma unit\"")]
    [TestCase("nm", Dimension.Length, "'nm' is not a quantity; write \"value unit\" or \"value ± sigma unit\"")]
    [TestCase("3 ± nm", Dimension.Length, "unknown unit '± nm' in '3 ± nm'; a length is expected (m, mm, um, nm, pm)")]
    [TestCase("", Dimension.Length, "the value is empty; a length is expected (m, mm, um, nm, pm)")]
    [TestCase("   ", Dimension.Time, "the value is empty; a time is expected (s, ms, us)")]
    [TestCase("1e999 nm", Dimension.Length, "'1e999 nm' is not a finite number")]
    [TestCase("1.0 nm", Dimension.Dimensionless, "'1.0 nm' has a unit, but a dimensionless number is expected")]
    [TestCase("1,5 nm", Dimension.Length, "unknown unit ',5 nm' in '1,5 nm'; a length is expected (m, mm, um, nm, pm)")]
    public void Rejects_with_a_message_that_says_what_is_wrong(string text, Dimension dimension, string message)
    {
        Assert.That(QuantityParser.TryParse(text, dimension, out _, out string error), Is.False);
        Assert.That(error, Is.EqualTo(message));
    }

    [Test]
    public void The_thrown_error_names_the_key_and_the_file()
    {
        var e = Assert.Throws<InputException>(() => QuantityParser.Parse("12 apples", Dimension.Length, "radius", "night.toml"))!;
        Assert.That(e.Message, Is.EqualTo("night.toml: radius: unknown unit 'apples' in '12 apples'; a length is expected (m, mm, um, nm, pm)"));
    }

    [Test]
    public void Culture_does_not_change_the_decimal_point()
    {
        var saved = System.Globalization.CultureInfo.CurrentCulture;
        try
        {
            // A culture with a decimal comma, as on many lab machines (built by hand: the tool runs in invariant mode).
            var comma = (System.Globalization.CultureInfo)System.Globalization.CultureInfo.InvariantCulture.Clone();
            comma.NumberFormat.NumberDecimalSeparator = ",";
            comma.NumberFormat.NumberGroupSeparator = ".";
            System.Globalization.CultureInfo.CurrentCulture = comma;
            Assert.That(QuantityParser.Parse("1.5 nm", Dimension.Length, "k", "f").Value, Is.EqualTo(1.5e-9).Within(1e-13).Percent);
        }
        finally
        {
            System.Globalization.CultureInfo.CurrentCulture = saved;
        }
    }
}
