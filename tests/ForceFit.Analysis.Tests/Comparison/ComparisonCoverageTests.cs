using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Fitting;
using ForceFit.Ingest.RunFiles;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Analysis.Tests.Comparison;

/// <summary>
/// The comparison with theory against injected truth (issue acceptance): simulated nights whose true radius,
/// temperature, plasma frequency, damping, beyond-PFA coefficient, amplitude and piezo scale are drawn from the
/// values and uncertainties the run files state, with every instrumental imperfection on. The 95% band of the true
/// theory, widened in quadrature by each point's random uncertainty, must contain the measured points at 93–97% of
/// the points; the true theory's chi-square p-values must be uniform (Kolmogorov–Smirnov); the other model must be
/// excluded at 99.7% wherever the two differ by more than five standard uncertainties.
/// </summary>
public sealed class ComparisonCoverageTests : TemporaryFolderTest
{
    private const int Nights = 200;

    private static (CombinedNight Night, IReadOnlyList<TheoryResult> Results, double TruePValue) ReduceAndCompare(string folder, Scenario scenario, ulong seed, int draws)
    {
        NightTruth truth = NightSimulator.Simulate(new SimulationRequest(folder, scenario, seed, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        NightSettings night = RunFileReader.ReadNight(folder);
        NightReduction reduction = NightPipeline.Reduce(night, new ComparisonOptions(draws, (int)seed));
        // The reduced night against the true curve (the truth theory with the night's true inputs) with the night's own
        // covariance (random and experimental systematic), issue acceptance of the reduction.
        return (reduction.Combined, reduction.Comparison, TruthCurves.PValueAgainstTruth(reduction.Combined, night.Runs[0].Theory, truth));
    }

    [Test]
    public void Bands_cover_the_measured_points_and_the_true_theory_has_uniform_p_values_over_200_nights()
    {
        // Small nights (12 positions, 5 biases, 1.5 s steps at 200 Hz) so that many fit in CI time. The points of one
        // night share its systematic errors, so the coverage fraction is measured per night rather than per point; a
        // piezo scale known to 0.1% keeps any single source from dominating the band at every separation at once.
        var scenario = new Scenario { Mode = SimulatedMode.FrequencyShift, Protocol = SimulatedProtocol.VoltageSteps, Runs = 1, Positions = 12, Biases = 5, StepDuration = 1.5, SampleRate = 200, PiezoScaleSigma = 0.001 };
        var inside = new int[Nights];
        var insideLinear = new int[Nights];
        var points = new int[Nights];
        var pValues = new double[Nights];
        var truePValues = new double[Nights];
        Parallel.For(0, Nights, new ParallelOptions { MaxDegreeOfParallelism = 2 }, index =>
        {
            ulong seed = 7000 + (ulong)index;
            var (night, results, truePValue) = ReduceAndCompare(Path.Combine(Folder, "n" + seed), scenario, seed, 250);
            Directory.Delete(Path.Combine(Folder, "n" + seed), recursive: true);
            truePValues[index] = truePValue;
            TheoryResult truth = results.Single(r => r.Theory == "Drude");
            double[] random = night.RandomSigma;
            for (int j = 0; j < night.Value.Length; j++)
            {
                double below = Math.Sqrt(Math.Pow(truth.Value[j] - truth.BandLow[j], 2) + Math.Pow(1.959963984540054 * random[j], 2));
                double above = Math.Sqrt(Math.Pow(truth.BandHigh[j] - truth.Value[j], 2) + Math.Pow(1.959963984540054 * random[j], 2));
                if (night.Value[j] >= truth.Value[j] - below && night.Value[j] <= truth.Value[j] + above) inside[index]++;
                double linear = 1.959963984540054 * Math.Sqrt(truth.LinearSigma[j] * truth.LinearSigma[j] + random[j] * random[j]);
                if (Math.Abs(night.Value[j] - truth.Value[j]) <= linear) insideLinear[index]++;
            }
            points[index] = night.Value.Length;
            pValues[index] = truth.PValue;
        });
        double coverage = (double)inside.Sum() / points.Sum();
        double ks = KolmogorovSmirnovUniform(pValues);
        TestContext.Out.WriteLine($"coverage of the 95% bands: {coverage:P2} of {points.Sum()} points (linearised band: {(double)insideLinear.Sum() / points.Sum():P2}); KS p-value of the true theory's p-values: {ks:G3}");
        TestContext.Out.WriteLine("true theory's p-values: " + string.Join(" ", pValues.Order().Select(p => p.ToString("F3"))));
        TestContext.Out.WriteLine($"reduced night against the true curve: p > 0.01 in {truePValues.Count(p => p > 0.01)} of {Nights}, KS p {KolmogorovSmirnovUniform(truePValues):G3}");
        using var scope = Assert.EnterMultipleScope();
        Assert.That(coverage, Is.InRange(0.93, 0.97), "95% band coverage");
        Assert.That(ks, Is.GreaterThan(0.01), "uniform p-values of the true theory (Kolmogorov–Smirnov)");
        Assert.That(truePValues.Count(p => p > 0.01), Is.GreaterThanOrEqualTo((int)Math.Ceiling(0.9 * Nights)), "the reduced night agrees with the true curve (p > 0.01) in at least 90% of nights");
    }

    [TestCase("Drude", "plasma")]
    [TestCase("plasma", "Drude")]
    public void The_other_model_is_excluded_where_the_two_differ_by_more_than_five_sigma(string truthTheory, string other)
    {
        var scenario = new Scenario { Mode = SimulatedMode.FrequencyShift, Protocol = SimulatedProtocol.VoltageSteps, Runs = 1, TruthTheory = truthTheory };
        var (night, results, _) = ReduceAndCompare(Path.Combine(Folder, "night"), scenario, 8100, 200);
        TheoryResult t = results.Single(r => r.Theory == truthTheory), o = results.Single(r => r.Theory == other);
        double[] random = night.RandomSigma;
        double largest = Enumerable.Range(0, night.Value.Length)
            .Max(j => Math.Abs(t.Value[j] - o.Value[j]) / Math.Sqrt(t.LinearSigma[j] * t.LinearSigma[j] + random[j] * random[j]));
        TestContext.Out.WriteLine($"truth {truthTheory}: p = {t.PValue:G3}; {other}: p = {o.PValue:G3}; largest difference {largest:F1} sigma");
        Assume.That(largest, Is.GreaterThan(5), "the two models differ by more than five standard uncertainties somewhere");
        using var scope = Assert.EnterMultipleScope();
        Assert.That(o.Excluded997, Is.True, other + " excluded at 99.7%");
        Assert.That(t.Excluded997, Is.False, truthTheory + " (the truth) not excluded at 99.7%");
    }

    // One-sample Kolmogorov–Smirnov test against the uniform distribution on [0, 1]; the asymptotic p-value with
    // Stephens' small-sample correction (M. A. Stephens, J. R. Stat. Soc. B 32, 115 (1970)).
    private static double KolmogorovSmirnovUniform(double[] values)
    {
        double[] x = values.Order().ToArray();
        int n = x.Length;
        double d = 0;
        for (int i = 0; i < n; i++) d = Math.Max(d, Math.Max((i + 1.0) / n - x[i], x[i] - (double)i / n));
        double t = (Math.Sqrt(n) + 0.12 + 0.11 / Math.Sqrt(n)) * d;
        double p = 0;
        for (int k = 1; k <= 100; k++) p += 2 * Math.Pow(-1, k - 1) * Math.Exp(-2 * k * k * t * t);
        return Math.Clamp(p, 0, 1);
    }
}
