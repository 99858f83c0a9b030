using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// Noise-free recovery (issue acceptance): a simulated run without imperfections and with the frequency noise
/// scaled down by 5e6 (HDF5, so no decimal rounding of the samples) must give back the injected z0 to 1 pm, k and
/// V0 to 1e-6 relative, and the force gradient to 1e-6 of the true curve at the reduced separations — what is
/// left is the method itself (the A^2/8 amplitude correction from the data's own shape, the Casimir force at the
/// reference gap, the interpolation tables).
/// </summary>
public sealed class NoiseFreeRecoveryTests : TemporaryFolderTest
{
    [Test]
    public void A_noise_free_frequency_run_is_recovered_to_a_millionth()
    {
        var scenario = new Scenario { Runs = 1, Imperfections = Imperfections.None, FrequencyNoise = 1e-9 };
        string folder = Path.Combine(Folder, "night");
        NightTruth truth = NightSimulator.Simulate(new SimulationRequest(folder, scenario, 3, true, SimulationRequest.DefaultColumns(scenario.Mode, true)));
        // The method in isolation: the settings name only the true theory, so the Casimir force felt by the reference
        // steps (taken from the settings' theories) is the true one.
        string toml = File.ReadAllText(Path.Combine(folder, "night.toml"));
        File.WriteAllText(Path.Combine(folder, "night.toml"), toml[..toml.LastIndexOf("[[theory]]", StringComparison.Ordinal)]);
        NightSettings night = RunFileReader.ReadNight(folder);
        RunResult result = RunReducer.Reduce(RunSteps.Read(night.Runs[0]));
        RunTruth t = truth.Runs[0].Run;
        RunCalibration c = result.Calibration;
        double[] curve = TheoryComparison.Predict(night.Runs[0].Theory, result.Separation, frequency: true)[0]; // "Drude" is the truth
        double worst = result.Value.Select((v, i) => Math.Abs(v / curve[i] - 1)).Max();
        var (v0, _, _, _, _) = NightPipeline.ResidualPotential(result);
        TestContext.Out.WriteLine($"z0 error {(c.GapOffset.Value - t.GapOffset) * 1e12:F3} pm, k {c.SpringConstant.Value / t.SpringConstant - 1:E2}, V0 {v0 / t.ResidualPotential - 1:E2}, worst point {worst:E2}");
        for (int i = 0; i < curve.Length; i++) TestContext.Out.WriteLine($"  a {result.Separation[i] * 1e9:F2} nm: {result.Value[i] / curve[i] - 1:E2} (amplitude correction {result.AmplitudeCorrection[i]:E2})");
        using var scope = Assert.EnterMultipleScope();
        Assert.That(Math.Abs(c.GapOffset.Value - t.GapOffset), Is.LessThan(1e-12), "z0 to 1 pm");
        Assert.That(c.SpringConstant.Value / t.SpringConstant - 1, Is.EqualTo(0).Within(1e-6), "k");
        Assert.That(v0 / t.ResidualPotential - 1, Is.EqualTo(0).Within(1e-6), "V0");
        Assert.That(worst, Is.LessThan(1e-6), "force gradient against the true curve");
    }
}
