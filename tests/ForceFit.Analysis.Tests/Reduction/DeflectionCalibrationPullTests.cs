using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// The calibration of deflection-mode voltage-step runs against injected truth: 20 simulated nights with every
/// imperfection on (including true inputs drawn from their statements). The pulls of z0, k, m and V0 (against the truth
/// at the resting separation) must have rms in
/// [0.8, 1.25] and mean within ±0.3, and the reduced force must agree with the true curve (p > 0.01) in at least 90%
/// of the nights (issue acceptance). Measured: chi2/dof 1.02 and 18 of 20, since V0 follows the sphere's deflected gap
/// within a position and the free signal's dependence on the calibration is fitted (chi2/dof 1.19 and 16 of 20 before).
/// </summary>
public sealed class DeflectionCalibrationPullTests : TemporaryFolderTest
{
    private const int Seeds = 20;

    [Test]
    public void Pulls_of_z0_k_m_and_V0_have_unit_rms_over_twenty_deflection_nights()
    {
        var scenario = new Scenario { Mode = SimulatedMode.Deflection, Protocol = SimulatedProtocol.VoltageSteps, Runs = 1 };
        var pulls = SimulatedNight.ReduceEach<(double Z0, double K, double M, double V0, double Chi2PerDof, double CurveP, double Slope, double Drift0)>(Folder, scenario, 6000, Seeds, n =>
        {
            RunCalibration c = n.Reduction.Runs[0].Calibration;
            return (n.GapOffsetPull, n.SpringConstantPull, (c.Sensitivity!.Value - n.Truth.Runs[0].Run.DeflectionSensitivity) / c.Sensitivity.Sigma,
                n.ResidualPotentialPull, c.ChiSquare / c.DegreesOfFreedom, n.CurvePValue, n.ResidualPotentialSlopePull, n.ResidualPotentialDriftPull);
        });
        using var scope = Assert.EnterMultipleScope();
        Pulls.AssertUnitRms(("z0", pulls.Select(p => p.Z0)), ("k", pulls.Select(p => p.K)), ("m", pulls.Select(p => p.M)), ("V0", pulls.Select(p => p.V0)));
        // The reported slope of V0 against separation (NightPipeline.ResidualPotential): voltage steps visit the gaps
        // in time order, so it rests on the calibration's fitted V0 drift w (its error is ~4e8 s times w's, measured);
        // before w was taken out it was 35 sigma off. Guarded, not held to the rule (which names z0, k, m, V0):
        // rms in [0.7, 1.3] and mean within ±0.5, our bounds, because w's own pull mean is −0.4 in frequency steps
        // (printed; open, DEVELOPERS.md).
        var slope = Pulls.Print("dV0/da", pulls.Select(p => p.Slope));
        Pulls.Print("V0 drift w", pulls.Select(p => p.Drift0));
        Assert.That(slope.Rms, Is.InRange(0.7, 1.3), "dV0/da pull rms");
        Assert.That(slope.Mean, Is.InRange(-0.5, 0.5), "dV0/da pull mean");

        int agree = pulls.Count(p => p.CurveP > 0.01);
        TestContext.Out.WriteLine($"calibration chi2/dof: mean {pulls.Average(p => p.Chi2PerDof):F3}; force against the true curve p > 0.01 in {agree} of {Seeds}");
        Assert.That(agree, Is.GreaterThanOrEqualTo(18), "the reduced force agrees with the true curve in at least 90% of nights");
        Assert.That(pulls.Average(p => p.Chi2PerDof), Is.InRange(0.85, 1.15), "calibration chi2 per degree of freedom");
    }
}
