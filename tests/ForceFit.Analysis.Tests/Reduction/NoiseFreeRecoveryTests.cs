using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// Noise-free recovery (issue acceptance): a simulated run without imperfections and with the signal noise scaled
/// down by 5e6 (frequency) or 5e8 (deflection) (HDF5, so no decimal rounding of the samples) must give back the
/// injected z0 to 1 pm, k (and m) and V0 to 1e-6 relative, and the force gradient (or force) to 1e-6 of the true
/// curve at the reduced separations — what is left is the method itself (the A^2/8 amplitude correction, the Casimir
/// force at the reference gap, the curve shape, the interpolation tables, the ramp windows).
/// </summary>
public sealed class NoiseFreeRecoveryTests : TemporaryFolderTest
{
    private sealed record Recovery(double GapOffsetError, double SpringConstantError, double SensitivityError, double ResidualPotentialError, double WorstPoint);

    // A noise-free night of one run (seed 3, HDF5) whose settings name only the true theory: the method in isolation,
    // so the Casimir force felt by the reference steps (taken from the settings' theories) is the true one.
    private (string Folder, NightTruth Truth) NoiseFreeNight(SimulatedMode mode, SimulatedProtocol protocol)
    {
        var scenario = new Scenario
        {
            Mode = mode, Protocol = protocol, Runs = 1, Imperfections = Imperfections.None, FrequencyNoise = 1e-9, DeflectionNoise = 1e-12,
        };
        string folder = Path.Combine(Folder, "night");
        NightTruth truth = NightSimulator.Simulate(new SimulationRequest(folder, scenario, 3, true, SimulationRequest.DefaultColumns(scenario.Mode, true)));
        string toml = File.ReadAllText(Path.Combine(folder, "night.toml"));
        File.WriteAllText(Path.Combine(folder, "night.toml"), toml[..toml.LastIndexOf("[[theory]]", StringComparison.Ordinal)]);
        return (folder, truth);
    }

    private Recovery Reduce(SimulatedMode mode, SimulatedProtocol protocol)
    {
        bool frequency = mode == SimulatedMode.FrequencyShift;
        (string folder, NightTruth truth) = NoiseFreeNight(mode, protocol);
        NightSettings night = RunFileReader.ReadNight(folder);
        RunResult result = RunReducer.Reduce(RunSteps.Read(night.Runs[0]));
        RunTruth t = truth.Runs[0].Run;
        RunCalibration c = result.Calibration;
        double[] curve = TheoryComparison.Predict(night.Runs[0].Theory, result.Separation, frequency)[0]; // "Drude" is the truth
        double worst = result.Value.Select((v, i) => Math.Abs(v / curve[i] - 1)).Max();
        var (v0, _, _, _, _) = NightPipeline.ResidualPotential(result);
        var r = new Recovery(c.GapOffset.Value - t.GapOffset, c.SpringConstant.Value / t.SpringConstant - 1,
            c.Sensitivity is { } m ? m.Value / t.DeflectionSensitivity - 1 : 0, v0 / t.ResidualPotential - 1, worst);
        TestContext.Out.WriteLine($"z0 error {r.GapOffsetError * 1e12:F3} pm, k {r.SpringConstantError:E2}, m {r.SensitivityError:E2}, V0 {r.ResidualPotentialError:E2}, worst point {worst:E2}, calibration chi2 {c.ChiSquare:G4} for {c.DegreesOfFreedom}");
        for (int i = 0; i < curve.Length; i += Math.Max(1, curve.Length / 24))
            TestContext.Out.WriteLine($"  a {result.Separation[i] * 1e9:F2} nm: {result.Value[i] / curve[i] - 1:E2} (amplitude correction {result.AmplitudeCorrection[i]:E2})");
        return r;
    }

    [TestCase(SimulatedMode.FrequencyShift, SimulatedProtocol.VoltageSteps)]
    [TestCase(SimulatedMode.Deflection, SimulatedProtocol.VoltageSteps)]
    [TestCase(SimulatedMode.FrequencyShift, SimulatedProtocol.DistanceRamps)]
    [TestCase(SimulatedMode.Deflection, SimulatedProtocol.DistanceRamps)]
    public void A_noise_free_run_is_recovered_to_a_millionth(SimulatedMode mode, SimulatedProtocol protocol)
    {
        Recovery r = Reduce(mode, protocol);
        using var scope = Assert.EnterMultipleScope();
        Assert.That(Math.Abs(r.GapOffsetError), Is.LessThan(1e-12), "z0 to 1 pm");
        Assert.That(r.SpringConstantError, Is.EqualTo(0).Within(1e-6), "k");
        Assert.That(r.SensitivityError, Is.EqualTo(0).Within(1e-6), "m");
        Assert.That(r.ResidualPotentialError, Is.EqualTo(0).Within(1e-6), "V0");
        Assert.That(r.WorstPoint, Is.LessThan(1e-6), "force gradient (or force) against the true curve");
    }

    /// <summary>
    /// The whole night of a noise-free frequency ramp run: its covariance is singular to rounding (shared errors dwarf a
    /// noise of 1e-9 Hz), which stopped the comparison with "Matrix must be positive definite"; the comparison now counts
    /// only the directions the covariance resolves, and the true theory's chi-square is finite with at least one degree of freedom.
    /// </summary>
    [Test]
    public void A_noise_free_night_is_compared_over_the_directions_its_covariance_resolves()
    {
        (string folder, _) = NoiseFreeNight(SimulatedMode.FrequencyShift, SimulatedProtocol.DistanceRamps);
        NightReduction night = NightPipeline.Reduce(RunFileReader.ReadNight(folder), new ComparisonOptions(0, 1));
        TheoryResult truth = night.Comparison.Single();
        TestContext.Out.WriteLine($"chi2 {truth.ChiSquare:G4} for {truth.DegreesOfFreedom} of {truth.Value.Length} points");
        using var scope = Assert.EnterMultipleScope();
        Assert.That(double.IsFinite(truth.ChiSquare), Is.True, "chi-square");
        Assert.That(truth.DegreesOfFreedom, Is.InRange(1, truth.Value.Length), "degrees of freedom: the resolved directions");
    }
}
