using ForceFit.Analysis.Comparison;
using ForceFit.Analysis.Reduction;
using ForceFit.Ingest.RunFiles;
using ForceFit.Tests.Shared;

namespace ForceFit.Analysis.Tests.Comparison;

/// <summary>
/// The bundled example night (example-runs/tarn-valley-night, simulated with Drude truth): the linearised and Monte
/// Carlo bands of every theory agree to 10% of the band (issue acceptance), the fits of theta and of the gap shift
/// are consistent with the truth the simulator injected (a drawn theta and no shift), and the Drude truth is not
/// excluded.
/// </summary>
public sealed class ExampleNightComparisonTests
{
    [Test]
    public void Linearised_and_Monte_Carlo_bands_agree_and_the_true_theory_fits()
    {
        NightSettings night = RunFileReader.ReadNight(Path.Combine(RepoPaths.Root, "example-runs", "tarn-valley-night"));
        NightReduction reduction = NightPipeline.Reduce(night, new ComparisonOptions(1000, 20261201));
        using var scope = Assert.EnterMultipleScope();
        foreach (TheoryResult t in reduction.Comparison)
        {
            TestContext.Out.WriteLine($"{TheoryComparison.Describe(t)}; theta {t.BeyondPfa?.Value:F2} ± {t.BeyondPfa?.Sigma:F2}; gap shift {t.GapShift?.Value * 1e9:F2} ± {t.GapShift?.Sigma * 1e9:F2} nm");
            double worst = Enumerable.Range(0, t.Value.Length).Max(i => Math.Abs(t.MonteCarloSigma[i] / t.LinearSigma[i] - 1));
            TestContext.Out.WriteLine($"  largest relative difference of the Monte Carlo and linearised sigma: {worst:P1}");
            Assert.That(t.BandDisagreement, Is.Empty, t.Theory + ": linearised and Monte Carlo 95% edges within 10% of the band");
        }
        TheoryResult drude = reduction.Comparison.Single(t => t.Theory == "Drude");
        Assert.That(drude.Excluded997, Is.False, "the simulated truth is not excluded");
        Assert.That(Math.Abs(drude.GapShiftPull), Is.LessThan(3), "the Casimir data's z0 agrees with the electrostatic one");
    }
}
