using System.Globalization;
using ForceFit.Core.Constants;
using ForceFit.Ingest.RunFiles;
using ForceFit.Simulation;
using ForceFit.Theory.Electrostatics;
using ForceFit.Theory.Geometry;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Permittivity;
using ForceFit.Tests.Shared;

namespace ForceFit.Simulation.Tests;

/// <summary>The simulator against its own definitions, closed forms and the statistics of its noise.</summary>
public sealed class SimulatorTests : TemporaryFolderTest
{
    private static Scenario Small(SimulatedMode mode = SimulatedMode.FrequencyShift, SimulatedProtocol protocol = SimulatedProtocol.VoltageSteps) => new()
    {
        Mode = mode,
        Protocol = protocol,
        Runs = 1,
        Positions = 4,
        Biases = 3,
        StepDuration = 1.0,
        SampleRate = 100,
        RampSpeed = 400e-9,
    };

    private NightTruth Simulate(string name, Scenario s, ulong seed, bool hdf5 = false) =>
        NightSimulator.Simulate(new SimulationRequest(Path.Combine(Folder, name), s, seed, hdf5, SimulationRequest.DefaultColumns(s.Mode, hdf5)));

    [Test]
    public void The_same_seed_gives_the_same_bytes_and_another_seed_does_not()
    {
        Simulate("a", Small(), 42);
        Simulate("b", Small(), 42);
        Simulate("c", Small(), 43);
        foreach (string file in new[] { "night.toml", "run-01.toml", "run-01.csv" })
        {
            Assert.That(File.ReadAllBytes(Path.Combine(Folder, "b", file)), Is.EqualTo(File.ReadAllBytes(Path.Combine(Folder, "a", file))), file);
        }
        Assert.That(File.ReadAllBytes(Path.Combine(Folder, "b.truth.json")), Is.EqualTo(File.ReadAllBytes(Path.Combine(Folder, "a.truth.json"))));
        Assert.That(File.ReadAllBytes(Path.Combine(Folder, "c", "run-01.csv")), Is.Not.EqualTo(File.ReadAllBytes(Path.Combine(Folder, "a", "run-01.csv"))));
    }

    [Test]
    public void The_truth_file_lies_beside_the_nightFolder_and_holds_what_was_injected()
    {
        Scenario s = Small() with { ResidualPotential = 0.033, PiezoScaleSigma = 0.02 };
        NightTruth written = Simulate("night", s, 5);
        Assert.That(Directory.GetFiles(Path.Combine(Folder, "night")).Select(Path.GetFileName).Order(), Is.EqualTo(new[] { "night.toml", "run-01.csv", "run-01.toml" }));
        NightTruth read = NightSimulator.ReadTruth(Path.Combine(Folder, "night.truth.json"));
        Assert.That(read.Seed, Is.EqualTo(5UL));
        Assert.That(read.Scenario, Is.EqualTo(s));
        Assert.That(read.Runs.Single().Run, Is.EqualTo(written.Runs.Single().Run));
        Assert.That(read.Runs.Single().Run.PiezoScale, Is.EqualTo(written.Runs.Single().Run.PiezoScale));
        Assert.That(read.Runs.Single().Run.PiezoScale, Is.Not.EqualTo(1.0).And.EqualTo(1.0).Within(0.1), "the true scale is drawn from 1 ± 0.02");
        Assert.That(read.Runs.Single().Steps, Is.EqualTo(written.Runs.Single().Steps));
    }

    [TestCase(SimulatedMode.FrequencyShift, SimulatedProtocol.VoltageSteps, false)]
    [TestCase(SimulatedMode.Deflection, SimulatedProtocol.VoltageSteps, false)]
    [TestCase(SimulatedMode.FrequencyShift, SimulatedProtocol.DistanceRamps, true)]
    [TestCase(SimulatedMode.Deflection, SimulatedProtocol.DistanceRamps, false)]
    public void The_written_night_is_a_valid_night_for_the_reader(SimulatedMode mode, SimulatedProtocol protocol, bool hdf5)
    {
        Simulate("n", Small(mode, protocol), 3, hdf5);
        NightSettings night = ForceFit.Ingest.NightCheck.Run(Path.Combine(Folder, "n"));
        Assert.That(night.Runs.Single().Protocol == Protocol.VoltageSteps, Is.EqualTo(protocol == SimulatedProtocol.VoltageSteps));
        Assert.That(night.Runs.Single().Instrument.Mode == InstrumentMode.FrequencyShift, Is.EqualTo(mode == SimulatedMode.FrequencyShift));
    }

    [Test]
    public void Noise_free_data_average_to_the_step_truth()
    {
        // No noise and no imperfections: the mean of the written signal after the settle time is the truth's
        // step mean, to the written resolution (1e-7 Hz).
        Scenario s = Small() with { Imperfections = Imperfections.None, FrequencyNoise = 0 };
        NightTruth truth = Simulate("q", s, 1);
        string[] lines = File.ReadAllLines(Path.Combine(Folder, "q", "run-01.csv")).Where(l => !l.StartsWith('#')).Skip(1).ToArray();
        double[][] rows = lines.Select(l => l.Split(',').Select(x => double.Parse(x, CultureInfo.InvariantCulture)).ToArray()).ToArray();
        foreach (StepTruth step in truth.Runs.Single().Steps)
        {
            var kept = rows.Where(r => r[0] >= step.Start + s.Settle - 1e-9 && r[0] < step.End - 1e-9).Select(r => r[3]).ToArray();
            Assert.That(kept, Has.Length.EqualTo(step.SamplesKept));
            Assert.That(kept.Average(), Is.EqualTo(step.MeanSignal).Within(1e-7), $"step {step.Index}");
        }
    }

    [Test]
    public void Ar1_noise_has_the_stated_variance_and_lag_one_correlation()
    {
        // Sampling errors for N = 400 000 at rho = 0.9: the variance to about 1.4e-3 relative per sqrt(N_eff),
        // N_eff = N (1 − rho)/(1 + rho); the lag-1 estimate to sqrt((1 − rho^2)/N) = 7e-4.
        const int n = 400_000;
        var noise = new Ar1Noise(new RandomSource(11), 5e-3, 0.9);
        var x = new double[n];
        for (int i = 0; i < n; i++) x[i] = noise.Next();
        double mean = x.Average();
        double variance = x.Select(v => (v - mean) * (v - mean)).Sum() / (n - 1);
        double lag1 = 0;
        for (int i = 1; i < n; i++) lag1 += (x[i] - mean) * (x[i - 1] - mean);
        lag1 /= (n - 1) * variance;
        double nEff = n * 0.1 / 1.9;
        Assert.That(variance / 25e-6, Is.EqualTo(1).Within(5 * Math.Sqrt(2 / nEff)));
        Assert.That(lag1, Is.EqualTo(0.9).Within(5 * Math.Sqrt((1 - 0.81) / n)));
    }

    [Test]
    public void Gaussian_and_uniform_deviates_have_their_moments()
    {
        var r = new RandomSource(123);
        const int n = 1_000_000;
        double sum = 0, sum2 = 0, sum4 = 0, uniform = 0;
        for (int i = 0; i < n; i++)
        {
            double g = r.NextGaussian();
            sum += g; sum2 += g * g; sum4 += g * g * g * g;
            uniform += r.NextDouble();
        }
        // Standard normal: mean 0 (sd 1/sqrt(N)), variance 1 (sd sqrt(2/N)), fourth moment 3 (sd sqrt(96/N)); uniform mean 1/2 (sd sqrt(1/12N)).
        Assert.That(sum / n, Is.EqualTo(0).Within(5 / Math.Sqrt(n)));
        Assert.That(sum2 / n, Is.EqualTo(1).Within(5 * Math.Sqrt(2.0 / n)));
        Assert.That(sum4 / n, Is.EqualTo(3).Within(5 * Math.Sqrt(96.0 / n)));
        Assert.That(uniform / n, Is.EqualTo(0.5).Within(5 * Math.Sqrt(1 / (12.0 * n))));
    }

    [TestCase(0.1)]
    [TestCase(0.5)]
    [TestCase(0.9)]
    public void The_amplitude_average_of_an_inverse_square_gradient_has_its_closed_form(double ratio)
    {
        // (2/pi) Integral (a + A u)^-2 sqrt(1 − u^2) du = a^-2 · 2/(s (1 + s)), s = sqrt(1 − A^2/a^2) (integration by hand from
        // (2/pi) Integral sqrt(1 − u^2)/(1 + e u) du = 2 (1 − sqrt(1 − e^2))/e^2, Gradshteyn & Ryzhik 3.613 family).
        double a = 100e-9, amplitude = ratio * a, s = Math.Sqrt(1 - ratio * ratio);
        double exact = 1 / (a * a) * 2 / (s * (1 + s));
        double numeric = AmplitudeAverage.Gradient(x => 1 / (x * x), a, amplitude);
        Assert.That(numeric / exact, Is.EqualTo(1).Within(ratio < 0.9 ? 1e-12 : 1e-6));
    }

    [Test]
    public void For_small_amplitudes_the_average_is_the_A_squared_over_8_expansion_and_departs_from_it_as_A_grows()
    {
        // physics.md: F'_eff = F' + (A^2/8) F''' + O(A^4). The Casimir + electrostatic gradient of a gold sphere at 150 nm.
        double ev = Codata2018.ElectronVoltAngularFrequency.Value;
        var gold = new DrudeModel(9 * ev, 0.035 * ev);
        var calc = new LifshitzCalculator(gold, gold, 295);
        var geometry = new SpherePlateGeometry(150e-6);
        var model = new ForceModel(calc, geometry, 40e-9, 400e-9, nodes: 800);
        double a = 150e-9, bias = 0.05;
        SpherePlateResult cas = SpherePlate.FromLifshitz(a, calc.At(a), geometry);
        ElectrostaticResult el = SpherePlateElectrostatics.At(a, 150e-6);
        double gradient = cas.ForceGradient + el.Gradient * bias * bias;
        double third = cas.ForceThirdDerivative + el.ThirdDerivative * bias * bias;
        double Deviation(double amplitude) =>
            (model.AveragedGradient(a, bias, amplitude) - (gradient + amplitude * amplitude / 8 * third)) / (amplitude * amplitude / 8 * third);
        double d1 = Deviation(1e-9), d4 = Deviation(4e-9), d16 = Deviation(16e-9);
        // The remainder relative to the A^2 term is the A^4 term, (A^2/24) F^(5)/F''': for power-law gradients a^-2 and
        // a^-4 (electrostatic near contact, Casimir) that is 1.25 and 1.75 (A/a)^2, so it grows 16x per 4x in A.
        Assert.That(Math.Abs(d1), Is.LessThan(1e-3));
        Assert.That(d4 / d1, Is.EqualTo(16).Within(2));
        Assert.That(d16 / d4, Is.EqualTo(16).Within(3));
        double x = Math.Pow(16e-9 / a, 2);
        Assert.That(d16, Is.InRange(1.2 * x, 1.8 * x));
    }

    [TestCase(120e-9, 0.0)]
    [TestCase(120e-9, 0.12)]
    [TestCase(300e-9, 0.3)]
    [TestCase(1e-6, 0.5)]
    public void The_static_deflection_satisfies_force_balance(double gap, double bias)
    {
        // k x = −F(a0 − x), to 1e-12 relative (the criterion).
        double ev = Codata2018.ElectronVoltAngularFrequency.Value;
        var gold = new DrudeModel(9 * ev, 0.035 * ev);
        var model = new ForceModel(new LifshitzCalculator(gold, gold, 295), new SpherePlateGeometry(150e-6), 40e-9, 1.5e-6, nodes: 600);
        double k = 0.05;
        double x = model.Deflection(gap, bias, k);
        double residual = k * x + model.Force(gap - x, bias);
        Assert.That(x, Is.GreaterThan(0), "attraction pulls the sphere toward the plate");
        Assert.That(Math.Abs(residual), Is.LessThanOrEqualTo(1e-12 * k * x));
    }

    [Test]
    public void The_tables_reproduce_the_theory_they_were_built_from()
    {
        double ev = Codata2018.ElectronVoltAngularFrequency.Value;
        var gold = new PlasmaModel(9 * ev);
        var calc = new LifshitzCalculator(gold, gold, 295);
        var geometry = new SpherePlateGeometry(150e-6, RoughnessVariance: 2e-18);
        var model = new ForceModel(calc, geometry, 40e-9, 1.5e-6, nodes: 1500);
        foreach (double a in new[] { 123.4e-9, 456.7e-9, 1.234e-6 })
        {
            SpherePlateResult direct = SpherePlate.FromLifshitz(a, calc.At(a), geometry);
            Assert.That(model.Gradient(a, 0) / direct.ForceGradient, Is.EqualTo(1).Within(1e-7));
            Assert.That(model.Force(a, 0) / direct.Force, Is.EqualTo(1).Within(1e-9));
            Assert.That(model.Gradient(a, 0.1) - model.Gradient(a, 0), Is.EqualTo(SpherePlateElectrostatics.At(a, 150e-6).Gradient * 0.01).Within(1e-9).Percent);
        }
    }

    [Test]
    public void An_outputFolder_that_is_not_empty_is_refused()
    {
        Directory.CreateDirectory(Path.Combine(Folder, "full"));
        File.WriteAllText(Path.Combine(Folder, "full", "keep.txt"), "precious");
        var e = Assert.Throws<ForceFit.Core.Problems.InputException>(() => Simulate("full", Small(), 1))!;
        Assert.That(e.Message, Does.EndWith("the output folder is not empty; choose a new folder"));
        Assert.That(File.ReadAllText(Path.Combine(Folder, "full", "keep.txt")), Is.EqualTo("precious"));
    }
}
