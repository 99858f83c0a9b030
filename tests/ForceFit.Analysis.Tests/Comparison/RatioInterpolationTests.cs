using ForceFit.Analysis.Comparison;
using ForceFit.Ingest.RunFiles;
using ForceFit.Tests.Shared;

namespace ForceFit.Analysis.Tests.Comparison;

/// <summary>
/// The Monte Carlo shortcut (a draw computed at a few separations, carried to the rest by the ratio to the nominal
/// prediction) against the full Lifshitz calculation at every separation, for inputs moved by three of their stated
/// standard uncertainties at once.
/// </summary>
public sealed class RatioInterpolationTests
{
    [Test]
    public void A_draw_from_the_ratio_spline_matches_the_full_calculation_to_a_millionth()
    {
        TheoryInputs inputs = RunFileReader.ReadNight(Path.Combine(RepoPaths.Root, "example-runs", "tarn-valley-night")).Runs[0].Theory;
        double[] a = Enumerable.Range(0, 60).Select(i => 110e-9 * Math.Pow(10, i / 59.0)).ToArray();
        TheoryInputs moved = inputs;
        foreach (TheoryParameter p in TheoryParameters.Of(inputs)) moved = p.Shift(moved, (p.Name.Length % 2 == 0 ? 3 : -3) * p.Sigma);
        foreach (bool frequency in new[] { true, false })
        {
            double[][] exact = TheoryComparison.Predict(moved, a, frequency);
            double[][] fast = new TheoryComparison.RatioInterpolation(inputs, a, frequency).Predict(moved);
            for (int t = 0; t < exact.Length; t++)
            {
                double worst = a.Select((_, i) => Math.Abs(fast[t][i] / exact[t][i] - 1)).Max();
                TestContext.Out.WriteLine($"{(frequency ? "gradient" : "force")}, theory {t}: largest relative difference {worst:E2}");
                Assert.That(worst, Is.LessThan(1e-6));
            }
        }
    }
}
