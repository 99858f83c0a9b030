using ForceFit.Analysis.Reduction;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// The electrostatic calibration of frequency-shift voltage-step runs against injected truth: 30 simulated nights
/// with every imperfection on (AR(1) noise, readout noise on the recorded piezo and bias, settling, f0 drift and
/// random walk, V0 varying with gap and time, a piezo scale drawn from its stated 1 ± 0.005, gap drift, glitches and
/// dropped samples). The pulls (estimate − truth)/sigma of z0, k and V0 must have rms in [0.8, 1.25] and mean within
/// ±0.3 (issue acceptance), the calibration chi-square must be consistent with its degrees of freedom, and the reduced
/// gradient must agree with the true curve (p > 0.01) in at least 90% of the nights.
/// </summary>
public sealed class FrequencyCalibrationPullTests : TemporaryFolderTest
{
    private const int Seeds = 30;

    [Test]
    public void Pulls_of_z0_k_and_V0_have_unit_rms_over_thirty_simulated_nights()
    {
        var scenario = new Scenario { Mode = SimulatedMode.FrequencyShift, Protocol = SimulatedProtocol.VoltageSteps, Runs = 1 };
        var pulls = SimulatedNight.ReduceEach<(double Z0, double K, double V0, double Drift, double PValue, double CurveP, double Slope, double Drift0)>(Folder, scenario, 5000, Seeds, n =>
        {
            RunResult result = n.Reduction.Runs[0];
            RunTruth t = n.Truth.Runs[0].Run;
            RunCalibration c = result.Calibration;
            return (n.GapOffsetPull, n.SpringConstantPull, n.ResidualPotentialPull, (c.GapDrift!.Value - t.GapDriftRate) / c.GapDrift.Sigma, c.PValue, n.CurvePValue, n.ResidualPotentialSlopePull, n.ResidualPotentialDriftPull);
        });
        using var scope = Assert.EnterMultipleScope();
        Pulls.AssertUnitRms(("z0", pulls.Select(p => p.Z0)), ("k", pulls.Select(p => p.K)), ("V0", pulls.Select(p => p.V0)), ("gap drift", pulls.Select(p => p.Drift)));
        // The reported slope of V0 against separation (NightPipeline.ResidualPotential): voltage steps visit the gaps
        // in time order, so it rests on the calibration's fitted V0 drift w (its error is ~4e8 s times w's, measured);
        // before w was taken out it was 35 sigma off. Guarded, not held to the rule (which names z0, k, m, V0):
        // rms in [0.7, 1.3] and mean within ±0.5, our bounds, because w's own pull mean is −0.4 in frequency steps
        // (printed; open, DEVELOPERS.md).
        var slope = Pulls.Print("dV0/da", pulls.Select(p => p.Slope));
        Pulls.Print("V0 drift w", pulls.Select(p => p.Drift0));
        Assert.That(slope.Rms, Is.InRange(0.7, 1.3), "dV0/da pull rms");
        Assert.That(slope.Mean, Is.InRange(-0.5, 0.5), "dV0/da pull mean");

        int consistent = pulls.Count(p => p.PValue > 0.01);
        TestContext.Out.WriteLine($"calibration p > 0.01 in {consistent} of {Seeds}");
        Assert.That(consistent, Is.GreaterThanOrEqualTo(27), "the calibration chi-square is consistent with its degrees of freedom in at least 90% of nights");
        // The reduced gradient against the true curve (the truth theory with the night's true inputs), with the
        // result's own random and systematic covariance.
        int agree = pulls.Count(p => p.CurveP > 0.01);
        TestContext.Out.WriteLine($"force gradient against the true curve: p > 0.01 in {agree} of {Seeds}");
        Assert.That(agree, Is.GreaterThanOrEqualTo(27), "the reduced gradient agrees with the true curve in at least 90% of nights");
    }
}
