using System.Globalization;
using System.Text;
using ForceFit.Core.Problems;
using ForceFit.Core.Units;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Ingest.Tests.Properties;

/// <summary>
/// Property tests of the readers on generated inputs (issue: hardening): whatever the text, the quantity parser, the
/// run-file (TOML) reader and the CSV reader either give a correct value or report an error naming the file — never
/// an unhandled exception. 4000 quantities, 3000 run files and 3000 data files, seeded, so the cases are the same
/// on every run.
/// </summary>
public sealed class ReaderPropertyTests : TemporaryFolderTest
{
    // Units with their SI factor and dimension, written out here independently of the unit table (run-files.md list).
    private static readonly (string Unit, double Factor, Dimension Dimension)[] Units =
    [
        ("m", 1, Dimension.Length), ("mm", 1e-3, Dimension.Length), ("um", 1e-6, Dimension.Length), ("µm", 1e-6, Dimension.Length),
        ("nm", 1e-9, Dimension.Length), ("pm", 1e-12, Dimension.Length), ("s", 1, Dimension.Time), ("ms", 1e-3, Dimension.Time),
        ("us", 1e-6, Dimension.Time), ("Hz", 1, Dimension.Frequency), ("kHz", 1e3, Dimension.Frequency), ("MHz", 1e6, Dimension.Frequency),
        ("V", 1, Dimension.Voltage), ("mV", 1e-3, Dimension.Voltage), ("uV", 1e-6, Dimension.Voltage), ("K", 1, Dimension.Temperature),
    ];

    private static readonly string[] Junk = ["", " ", "±", "+/-", "+-", "e", "E", ".", ",", "-", "+", "NaN", "Infinity", "∞", "1e400", "0x1F", "\t", "\u00a0", "µ", "°", "\"", "'", "#", "=", "[", "]", "{", "}", "\\", "\0", "é", "Ω"];

    private static string Number(Random r, out double value)
    {
        value = Math.Round((r.NextDouble() * 2 - 1) * Math.Pow(10, r.Next(-3, 4)), r.Next(0, 6));
        return r.Next(4) switch
        {
            0 => value.ToString("R", CultureInfo.InvariantCulture),
            1 => value.ToString("E4", CultureInfo.InvariantCulture),
            2 => value.ToString("F3", CultureInfo.InvariantCulture),
            _ => value.ToString("G6", CultureInfo.InvariantCulture),
        };
    }

    [Test]
    public void The_quantity_parser_gives_the_right_SI_value_or_an_error_for_generated_text()
    {
        var random = new Random(20261201);
        int valid = 0, rejected = 0;
        for (int n = 0; n < 4000; n++)
        {
            var (unit, factor, dimension) = Units[random.Next(Units.Length)];
            string text;
            double? expectValue = null, expectSigma = null;
            if (random.Next(2) == 0)
            {
                // A well-formed quantity (its value round-tripped through the same text the parser reads).
                string v = Number(random, out _);
                bool withSigma = random.Next(2) == 0;
                string s = Math.Abs(Math.Round(random.NextDouble() * 10, 3)).ToString("R", CultureInfo.InvariantCulture);
                string sep = new[] { " ± ", "±", " +/- ", "+/-" }[random.Next(4)];
                text = withSigma ? $"{v}{sep}{s} {unit}" : $"{v} {unit}";
                expectValue = double.Parse(v, CultureInfo.InvariantCulture) * factor;
                expectSigma = withSigma ? double.Parse(s, CultureInfo.InvariantCulture) * factor : 0;
            }
            else
            {
                // Random pieces: numbers, separators, units and junk in any order.
                var b = new StringBuilder();
                for (int k = random.Next(1, 6); k > 0; k--)
                    b.Append(random.Next(3) switch { 0 => Number(random, out _), 1 => Units[random.Next(Units.Length)].Unit, _ => Junk[random.Next(Junk.Length)] });
                text = b.ToString();
            }
            bool ok = false;
            Measurement m = default;
            string error = "";
            Assert.DoesNotThrow(() => ok = QuantityParser.TryParse(text, dimension, out m, out error), $"'{text}'");
            if (ok)
            {
                valid++;
                Assert.That(double.IsFinite(m.Value) && double.IsFinite(m.Sigma) && m.Sigma >= 0, Is.True, $"'{text}' gives a finite value and sigma");
                Assert.That(m.Dimension, Is.EqualTo(dimension), $"'{text}'");
                if (expectValue is { } ev)
                {
                    Assert.That(m.Value, Is.EqualTo(ev).Within(1e-12 * Math.Abs(ev) + 1e-300), $"'{text}' value");
                    Assert.That(m.Sigma, Is.EqualTo(expectSigma!.Value).Within(1e-12 * expectSigma.Value + 1e-300), $"'{text}' sigma");
                }
            }
            else
            {
                rejected++;
                Assert.That(error, Is.Not.Empty, $"'{text}' is rejected with a reason");
                Assert.That(expectValue, Is.Null, $"the well-formed quantity '{text}' is read, not rejected ({error})");
            }
        }
        TestContext.Out.WriteLine($"{valid} parsed, {rejected} rejected with a message");
        Assert.That(valid, Is.GreaterThan(1500), "the generator produces enough valid quantities to check their values");
    }

    private static string Mutate(Random r, string text)
    {
        var b = new StringBuilder(text);
        for (int k = r.Next(1, 4); k > 0 && b.Length > 0; k--)
        {
            int at = r.Next(b.Length);
            switch (r.Next(6))
            {
                case 0: b.Remove(at, 1); break;
                case 1: b.Insert(at, Junk[r.Next(Junk.Length)]); break;
                case 2: b.Insert(at, (char)r.Next(32, 127)); break;
                case 3: b.Length = at; break; // truncated
                case 4:
                    int end = text.IndexOf('\n', Math.Min(at, text.Length - 1));
                    if (end > at) b.Insert(at, text[at..end]); // a duplicated piece of a line
                    break;
                default: b[at] = (char)r.Next(0, 256); break;
            }
        }
        return b.ToString();
    }

    private static void AssertReportedOrFine(Action read, string what)
    {
        try
        {
            read();
        }
        catch (InputException e)
        {
            Assert.That(e.Problems, Is.Not.Empty, what);
            Assert.That(e.Problems.All(p => p.File.Length > 0), what + ": every problem names its file");
        }
        catch (Exception e)
        {
            Assert.Fail($"{what}: unhandled {e.GetType().Name}: {e.Message}");
        }
    }

    [Test]
    public void The_run_file_reader_reads_or_reports_every_mutated_night()
    {
        string source = Path.Combine(RepoPaths.Corpus, "nights", "small-night");
        string nightToml = File.ReadAllText(Path.Combine(source, "night.toml")), runToml = File.ReadAllText(Path.Combine(source, "run-a.toml"));
        var random = new Random(7);
        int fine = 0;
        for (int n = 0; n < 3000; n++)
        {
            string dir = Path.Combine(Folder, "n" + n);
            Directory.CreateDirectory(dir);
            bool mutateNight = random.Next(3) > 0;
            File.WriteAllText(Path.Combine(dir, "night.toml"), mutateNight ? Mutate(random, nightToml) : nightToml);
            File.WriteAllText(Path.Combine(dir, "run-a.toml"), mutateNight ? runToml : Mutate(random, runToml));
            File.Copy(Path.Combine(source, "run-a.csv"), Path.Combine(dir, "run-a.csv"));
            bool ok = false;
            AssertReportedOrFine(() => { RunFileReader.ReadNight(dir); ok = true; }, $"case {n}");
            if (ok) fine++;
            Directory.Delete(dir, recursive: true);
        }
        TestContext.Out.WriteLine($"{fine} of 3000 mutated nights still read; the rest reported");
    }

    [Test]
    public void The_CSV_reader_reads_or_reports_every_mutated_data_file()
    {
        string night = Path.Combine(Folder, "night");
        var scenario = new Scenario { Runs = 1, Positions = 3, Biases = 3, StepDuration = 0.8, SampleRate = 50 };
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 5, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        RunSettings run = RunFileReader.ReadNight(night).Runs[0];
        string csv = File.ReadAllText(run.DataFile);
        var random = new Random(11);
        int fine = 0;
        for (int n = 0; n < 3000; n++)
        {
            File.WriteAllText(run.DataFile, Mutate(random, csv));
            bool ok = false;
            AssertReportedOrFine(() => { RunSteps.Read(run); ok = true; }, $"case {n}");
            if (ok) fine++;
        }
        TestContext.Out.WriteLine($"{fine} of 3000 mutated data files still reduced to steps; the rest reported ({csv.Length} bytes each)");
    }
}
