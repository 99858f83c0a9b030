using ForceFit.Analysis.Reduction;
using ForceFit.Fitting;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// The combination of a night's runs on a common grid, on constructed runs with known answers: the inverse-variance
/// weighted mean and its variance (J. R. Taylor, An Introduction to Error Analysis, 2nd ed., ch. 7), the Birge ratio
/// (R. T. Birge, Phys. Rev. 40, 207 (1932)), interpolation that is exact for a power law, coherent shared systematics,
/// never extrapolating, and the flag on a run that disagrees.
/// </summary>
public sealed class NightCombinerTests
{
    private static RunResult Run(string name, double[] a, double[] value, double[] sigma, params SystematicSource[] systematics)
    {
        var cov = new double[a.Length, a.Length];
        for (int i = 0; i < a.Length; i++) cov[i, i] = sigma[i] * sigma[i];
        var none = new Estimate(0, 0, 0);
        var calibration = new RunCalibration(none, none, null, 0, 0, StopReason.ParametersConverged, []);
        return new RunResult(name, calibration, [], a, value, new double[a.Length], cov, systematics, FreeSignalTrack.Given(0, 0),
            new double[0, 0], new double[a.Length], []);
    }

    private static SystematicSource Source(string name, double[] row, bool shared) => new(name, [row], [0], [0], [0], shared);

    private static double[] Power(double[] a) => a.Select(x => 1e-30 * Math.Pow(x, -4)).ToArray();

    [Test]
    public void Runs_on_the_same_separations_give_the_inverse_variance_weighted_mean_and_the_Birge_ratio()
    {
        double[] a = [100e-9, 200e-9, 300e-9, 400e-9];
        double[] truth = Power(a);
        double[] s1 = truth.Select(v => 0.01 * v).ToArray(), s2 = truth.Select(v => 0.02 * v).ToArray();
        double[] v1 = truth.Select(v => v * 1.005).ToArray(), v2 = truth.Select(v => v * 0.99).ToArray();
        CombinedNight c = NightCombiner.Combine([Run("A", a, v1, s1), Run("B", a, v2, s2)], frequency: true);
        Assert.That(c.Separation, Is.EqualTo(a));
        for (int i = 0; i < a.Length; i++)
        {
            double w1 = 1 / (s1[i] * s1[i]), w2 = 1 / (s2[i] * s2[i]);
            double mean = (w1 * v1[i] + w2 * v2[i]) / (w1 + w2);
            Assert.That(c.Value[i], Is.EqualTo(mean).Within(1e-12).Percent, "weighted mean");
            Assert.That(c.RandomSigma[i], Is.EqualTo(Math.Sqrt(1 / (w1 + w2))).Within(1e-9).Percent, "sigma of the weighted mean");
            double birge = Math.Sqrt(w1 * Math.Pow(v1[i] - mean, 2) + w2 * Math.Pow(v2[i] - mean, 2));
            Assert.That(c.BirgeRatio[i], Is.EqualTo(birge).Within(1e-9).Percent, "Birge ratio with n − 1 = 1");
            // Student's t for one degree of freedom at 95%: 12.706 (any table of the t distribution).
            Assert.That(c.HalfWidth95[i], Is.EqualTo(Math.Max(1.96, 12.706 * birge) * c.RandomSigma[i]).Within(0.01).Percent);
        }
    }

    [Test]
    public void Interpolation_onto_the_grid_is_exact_for_a_power_law_and_never_extrapolates()
    {
        double[] a1 = Enumerable.Range(0, 12).Select(i => 100e-9 + 50e-9 * i).ToArray();
        double[] a2 = Enumerable.Range(0, 10).Select(i => 180e-9 + 47e-9 * i).ToArray();
        CombinedNight c = NightCombiner.Combine([Run("A", a1, Power(a1), Power(a1).Select(v => 1e-3 * v).ToArray()),
            Run("B", a2, Power(a2), Power(a2).Select(v => 1e-3 * v).ToArray())], frequency: true);
        double[] exact = Power(c.Separation);
        for (int i = 0; i < c.Value.Length; i++) Assert.That(c.Value[i] / exact[i] - 1, Is.EqualTo(0).Within(1e-9), $"point {i}");
        for (int i = 0; i < c.Value.Length; i++)
        {
            bool inA = c.Separation[i] >= a1[0] && c.Separation[i] <= a1[^1], inB = c.Separation[i] >= a2[0] * (1 - 1e-12) && c.Separation[i] <= a2[^1] * (1 + 1e-12);
            Assert.That(c.RunsAtPoint[i], Is.EqualTo((inA ? 1 : 0) + (inB ? 1 : 0)), $"runs covering {c.Separation[i]:G4} m");
        }
        Assert.That(c.Separation[0], Is.EqualTo(a1[0]).Within(1e-9).Percent);
        Assert.That(c.Separation[^1], Is.EqualTo(Math.Max(a1[^1], a2[^1])).Within(1e-9).Percent);
        Assert.That(c.Consistency.All(r => !r.Flagged), "identical curves are consistent");
    }

    [Test]
    public void Shared_systematics_move_the_mean_coherently_and_own_ones_average_down()
    {
        double[] a = [100e-9, 200e-9, 300e-9];
        double[] v = Power(a), s = v.Select(x => 0.01 * x).ToArray();
        double[] row = v.Select(x => 0.03 * x).ToArray();
        CombinedNight c = NightCombiner.Combine([
            Run("A", a, v, s, Source("radius", row, shared: true), Source("calibration", row, shared: false)),
            Run("B", a, v, s, Source("radius", row, shared: true), Source("calibration", row, shared: false))], frequency: true);
        var budget = c.Budget().ToDictionary(b => b.Source, b => b.Sigma);
        for (int i = 0; i < a.Length; i++)
        {
            Assert.That(budget["radius"][i], Is.EqualTo(row[i]).Within(1e-9).Percent, "a shared source is not reduced by averaging");
            Assert.That(budget["calibration"][i], Is.EqualTo(row[i] / Math.Sqrt(2)).Within(1e-9).Percent, "independent calibrations average down");
        }
    }

    [Test]
    public void A_run_that_disagrees_is_flagged_with_its_reason_and_kept()
    {
        double[] a = Enumerable.Range(0, 8).Select(i => 100e-9 + 40e-9 * i).ToArray();
        double[] v = Power(a), s = v.Select(x => 0.01 * x).ToArray();
        var runs = new[] { "A", "B", "C", "D" }.Select((name, r) => Run(name, a, v.Select(x => x * (r == 2 ? 1.2 : 1 + 0.002 * r)).ToArray(), s)).ToArray();
        CombinedNight c = NightCombiner.Combine(runs, frequency: true);
        var flagged = c.Consistency.Where(x => x.Flagged).ToArray();
        Assert.That(flagged.Select(x => x.Run), Is.EqualTo(new[] { "C" }), "only the run 20 sigma off is flagged");
        Assert.That(flagged[0].Reason, Does.Contain("C disagrees with the other runs"));
        Assert.That(c.RunsAtPoint, Is.All.EqualTo(4), "a flagged run stays in the mean");
        Assert.That(c.OverallBirgeRatio, Is.GreaterThan(3));
    }
}
