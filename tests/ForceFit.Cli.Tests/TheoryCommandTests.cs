using System.Globalization;
using System.Numerics;
using ForceFit.Cli;
using ForceFit.Tests.Shared;

namespace ForceFit.Cli.Tests;

/// <summary>`forcefit theory` end to end: files in, CSV out, checked against published limits.</summary>
public sealed class TheoryCommandTests : TemporaryFolderTest
{
    private const double Hbar = 6.62607015e-34 / (2 * Math.PI); // CODATA 2018 (exact)
    private const double C = 299792458.0;
    private const double EV = 1.602176634e-19 / Hbar; // rad/s per eV
    private string TheoryFile(string name, string surfaces, string materials, string theories, string radius = "100 um")
    {
        string path = Path.Combine(Folder, name);
        File.WriteAllText(path, $"""
            title = "theory-only test file"
            [sphere]
            radius = "{radius}"
            [surfaces]
            {surfaces}
            {materials}
            {theories}
            """);
        return path;
    }

    private static (int Exit, string Out, string Err) Run(params string[] args)
    {
        var output = new StringWriter();
        var errors = new StringWriter();
        int exit = Commands.Run(args, output, errors);
        return (exit, output.ToString(), errors.ToString());
    }

    private static List<Dictionary<string, string>> Csv(string text)
    {
        string[] lines = text.TrimEnd('\n').Split('\n');
        string[] header = lines[0].Split(',');
        return lines.Skip(1).Select(l => header.Zip(l.Split(','), (h, v) => (h, v)).ToDictionary(p => p.h, p => p.v)).ToList();
    }

    private static double D(Dictionary<string, string> row, string column) => double.Parse(row[column], CultureInfo.InvariantCulture);

    private const string IdealMetal = """
        [materials.ideal]
        model = "plasma"
        plasma_frequency = "1e6 eV"
        """;

    private const string IdealTheory = """
        [[theory]]
        name = "ideal metal"
        sphere = "ideal"
        plate = "ideal"
        """;

    [Test]
    public void Writes_the_documented_columns_one_row_per_theory_and_separation()
    {
        string file = TheoryFile("two.toml", "temperature = \"300 K\"", IdealMetal + "\n[materials.au]\nmodel = \"drude\"\nplasma_frequency = \"9 eV\"\ndamping = \"35 meV\"",
            IdealTheory + "\n[[theory]]\nname = \"Drude\"\nsphere = \"au\"\nplate = \"au\"");
        string outFile = Path.Combine(Folder, "out", "theory.csv");
        var (exit, output, errors) = Run("theory", file, "--from", "100nm", "--to", "1000nm", "--count", "10", "--out", outFile);
        Assert.That(exit, Is.Zero, errors);
        Assert.That(output, Does.Contain("wrote 20 rows"));
        string text = File.ReadAllText(outFile);
        Assert.That(text.Split('\n')[0], Is.EqualTo("theory,separation_m,pressure_Pa,free_energy_J_per_m2,force_N,force_gradient_N_per_m"));
        var rows = Csv(text);
        Assert.That(rows.Select(r => r["theory"]).Distinct(), Is.EqualTo(new[] { "ideal metal", "Drude" }));
        Assert.That(rows.Take(10).Select(r => D(r, "separation_m")), Is.EqualTo(Enumerable.Range(0, 10).Select(i => (100 + 100 * i) * 1e-9)).Within(1e-21));
        Assert.That(Directory.GetFiles(Path.GetDirectoryName(outFile)!), Has.Length.EqualTo(1), "no temporary file is left behind");
    }

    [Test]
    public void Ideal_metal_at_zero_temperature_gives_the_Casimir_pressure_and_the_PFA_force()
    {
        // Casimir (1948) with the first plasma correction −(16/3) c/(wp a) (Bordag, Mohideen, Mostepanenko 2001);
        // PFA (physics.md): F = 2 pi R E, F' = −2 pi R P.
        string file = TheoryFile("ideal.toml", "temperature = \"0 K\"", IdealMetal, IdealTheory);
        var (exit, output, errors) = Run("theory", file, "--at", "150nm,0.5um");
        Assert.That(exit, Is.Zero, errors);
        foreach (var row in Csv(output))
        {
            double a = D(row, "separation_m"), d = C / (1e6 * EV * a);
            double p = -Math.PI * Math.PI * Hbar * C / (240 * Math.Pow(a, 4)) * (1 - 16.0 / 3 * d);
            double e = -Math.PI * Math.PI * Hbar * C / (720 * Math.Pow(a, 3)) * (1 - 4 * d);
            Assert.That(D(row, "pressure_Pa") / p, Is.EqualTo(1).Within(1e-9));
            Assert.That(D(row, "free_energy_J_per_m2") / e, Is.EqualTo(1).Within(1e-9));
            Assert.That(D(row, "force_N") / (2 * Math.PI * 100e-6 * e), Is.EqualTo(1).Within(1e-9));
            Assert.That(D(row, "force_gradient_N_per_m") / (-2 * Math.PI * 100e-6 * p), Is.EqualTo(1).Within(1e-9));
        }
    }

    [Test]
    public void Rms_roughness_multiplies_the_gradient_by_the_published_factor()
    {
        // physics.md: a^-4 laws (pressure, gradient) gain 1 + 10 (d1^2 + d2^2)/a^2, a^-3 laws (force) 1 + 6 (...)/a^2.
        string smooth = TheoryFile("smooth.toml", "temperature = \"0 K\"", IdealMetal, IdealTheory);
        string rough = TheoryFile("rough.toml", "temperature = \"0 K\"\nsphere_roughness = \"1.1 nm\"\nplate_roughness = \"0.9 nm\"", IdealMetal, IdealTheory);
        var s = Csv(Run("theory", smooth, "--at", "100nm").Out).Single();
        var r = Csv(Run("theory", rough, "--at", "100nm").Out).Single();
        double s2 = (1.1 * 1.1 + 0.9 * 0.9) * 1e-18, a2 = 1e-14;
        Assert.That(D(r, "force_gradient_N_per_m") / D(s, "force_gradient_N_per_m"), Is.EqualTo(1 + 10 * s2 / a2).Within(1e-6));
        Assert.That(D(r, "force_N") / D(s, "force_N"), Is.EqualTo(1 + 6 * s2 / a2).Within(1e-6));
    }

    [Test]
    public void Measured_Gaussian_height_histograms_agree_with_the_rms_formula_to_second_order()
    {
        // Geometrical averaging over two Gaussian histograms of rms 1.1 and 0.9 nm: the same to O(sigma^4/a^4) ~ 1e-6 at 100 nm.
        foreach ((string name, double width) in new[] { ("sphere.csv", 1.1), ("plate.csv", 0.9) })
        {
            var lines = new List<string> { "# invented test surface", "height_nm,fraction" };
            for (int i = -50; i <= 50; i++)
            {
                double h = i * width / 10;
                lines.Add(FormattableString.Invariant($"{h},{Math.Exp(-h * h / (2 * width * width))}"));
            }
            File.WriteAllLines(Path.Combine(Folder, name), lines);
        }
        string rms = TheoryFile("rms.toml", "temperature = \"0 K\"\nsphere_roughness = \"1.1 nm\"\nplate_roughness = \"0.9 nm\"", IdealMetal, IdealTheory);
        string measured = TheoryFile("measured.toml", "temperature = \"0 K\"\nsphere_roughness = \"sphere.csv\"\nplate_roughness = \"plate.csv\"", IdealMetal, IdealTheory);
        var a = Csv(Run("theory", rms, "--at", "100nm").Out).Single();
        var (exit, output, errors) = Run("theory", measured, "--at", "100nm");
        Assert.That(exit, Is.Zero, errors);
        var b = Csv(output).Single();
        Assert.That(D(b, "force_gradient_N_per_m") / D(a, "force_gradient_N_per_m"), Is.EqualTo(1).Within(2e-5));
    }

    [Test]
    public void Optical_data_of_a_Drude_metal_reproduce_the_Drude_theory()
    {
        // n, k tabulated from eps = 1 − wp^2/(omega (omega + i gamma)) on 0.05–300 eV, Drude tail with the same parameters.
        var lines = new List<string> { "energy_eV,n,k" };
        for (int i = 0; i < 5000; i++)
        {
            double ev = 0.05 * Math.Pow(6000, i / 4999.0), w = ev * EV;
            Complex root = Complex.Sqrt(1 - Math.Pow(9 * EV, 2) / (w * new Complex(w, 0.035 * EV)));
            lines.Add(FormattableString.Invariant($"{ev:R},{root.Real:R},{root.Imaginary:R}"));
        }
        File.WriteAllLines(Path.Combine(Folder, "au-optics.csv"), lines);
        string materials = """
            [materials.au-table]
            model = "optical-data"
            table = "au-optics.csv"
            tail = "drude"
            plasma_frequency = "9 eV"
            damping = "0.035 eV"
            [materials.au]
            model = "drude"
            plasma_frequency = "9 eV"
            damping = "0.035 eV"
            """;
        string theories = "[[theory]]\nname = \"table\"\nsphere = \"au-table\"\nplate = \"au-table\"\n[[theory]]\nname = \"Drude\"\nsphere = \"au\"\nplate = \"au\"";
        string file = TheoryFile("optics.toml", "temperature = \"300 K\"", materials, theories);
        var (exit, output, errors) = Run("theory", file, "--at", "300nm");
        Assert.That(exit, Is.Zero, errors);
        var rows = Csv(output);
        Assert.That(D(rows[0], "pressure_Pa") / D(rows[1], "pressure_Pa"), Is.EqualTo(1).Within(1e-5));
    }

    [TestCase("--from 100 --to 1um --count 3", "usage error: --from: '100' has no unit; a length is expected (m, mm, um, nm, pm)")]
    [TestCase("--from 100nm --to 1um --count 0", "usage error: --count must be a whole number of at least 1, got '0'")]
    [TestCase("--from 1um --to 100nm --count 3", "usage error: --to must be larger than --from")]
    [TestCase("--at 100nm --count 3", "usage error: give either --at or --from/--to/--count, not both")]
    [TestCase("--at -5nm", "usage error: --at: a separation must be positive, got '-5nm'")]
    [TestCase("--from 100nm --to 1um", "usage error: give --from, --to and --count (or --at a list of separations)")]
    [TestCase("--at 100nm --colour red", "usage error: unknown option '--colour' for theory")]
    public void Wrong_options_exit_2_with_a_message(string options, string message)
    {
        string file = TheoryFile("ok.toml", "temperature = \"0 K\"", IdealMetal, IdealTheory);
        var (exit, _, errors) = Run(["theory", file, .. options.Split(' ')]);
        Assert.That(exit, Is.EqualTo(2));
        Assert.That(errors.Split(Environment.NewLine)[0], Is.EqualTo(message));
    }

    [Test]
    public void A_file_without_theories_exits_1()
    {
        string file = TheoryFile("none.toml", "temperature = \"0 K\"", IdealMetal, "");
        var (exit, _, errors) = Run("theory", file, "--at", "100nm");
        Assert.That(exit, Is.EqualTo(1));
        Assert.That(errors.Trim(), Is.EqualTo($"error: {file}: no [[theory]] entry; add one with name, sphere and plate"));
    }
}

/// <summary>`forcefit simulate` options: units and names chosen by the user end up in the run file and the data.</summary>
public sealed class SimulateCommandTests
{
    [Test]
    public void Chosen_units_and_names_are_written_and_read_back()
    {
        string folder = Path.Combine(Path.GetTempPath(), "forcefit-tests", Guid.NewGuid().ToString("N"));
        string night = Path.Combine(folder, "n");
        var output = new StringWriter();
        var errors = new StringWriter();
        int exit = Commands.Run(["simulate", "--out", night, "--runs", "1", "--positions", "3", "--biases", "3", "--step", "1s",
            "--units", "piezo=um,bias=V,signal=kHz", "--names", "time,z_piezo,U,freq"], output, errors);
        Assert.That(exit, Is.Zero, errors.ToString());
        string header = File.ReadLines(Path.Combine(night, "run-01.csv")).First(l => !l.StartsWith('#'));
        Assert.That(header, Is.EqualTo("time,z_piezo,U,freq"));
        var settings = ForceFit.Ingest.NightCheck.Run(night).Runs.Single();
        Assert.That(settings.Columns.Piezo.Unit.Symbol, Is.EqualTo("um"));
        Assert.That(settings.Columns.Frequency!.Unit.Symbol, Is.EqualTo("kHz"));
        // 25 kHz written in kHz.
        string firstRow = File.ReadLines(Path.Combine(night, "run-01.csv")).Where(l => !l.StartsWith('#')).Skip(1).First();
        Assert.That(double.Parse(firstRow.Split(',')[3], System.Globalization.CultureInfo.InvariantCulture), Is.EqualTo(25).Within(0.1));
        Directory.Delete(folder, true);
    }

    [TestCase("--names a,b,c", "usage error: --names takes four column names (time, piezo, bias, signal) separated by commas, got 'a,b,c'")]
    [TestCase("--units piezo=kHz", "usage error: --units: 'kHz' is not a unit of a length for piezo")]
    [TestCase("--mode static", "usage error: --mode is frequency-shift or deflection, got 'static'")]
    [TestCase("--without sparks", "usage error: --without: unknown imperfection 'sparks'; known: correlated-noise, readout-noise, settling, drift, v0-variation, piezo-scale, gap-drift, glitches, dropped-samples, stated-inputs")]
    [TestCase("--runs 0", "usage error: --runs must be a whole number from 1 to 1000, got '0'")]
    public void Wrong_options_exit_2(string options, string message)
    {
        var errors = new StringWriter();
        int exit = Commands.Run(["simulate", "--out", "/tmp/never-written", .. options.Split(' ')], new StringWriter(), errors);
        Assert.That(exit, Is.EqualTo(2));
        Assert.That(errors.ToString().Split(Environment.NewLine)[0], Is.EqualTo(message));
        Assert.That(Directory.Exists("/tmp/never-written"), Is.False);
    }
}
