using ForceFit.Analysis.Reduction;

namespace ForceFit.Analysis.Tests.Reduction;

/// <summary>
/// The tabulated reference-gap Casimir curve against exact values: power laws (the PFA gradient of ideal plates goes
/// as a^-4, the high-temperature limit's as a^-2) and their mean over two "theories". The bound is the cubic Lagrange
/// remainder n^4 h^4 / 43 with h = 1/256 in ln a (1.4e-9 for n = 4), given a factor of 10 for rounding.
/// </summary>
public sealed class ReferenceCasimirCurveTests
{
    [Test]
    public void Interpolated_mean_matches_the_exact_mean_of_power_laws()
    {
        var curve = new ReferenceCasimirCurve(a => [1e-30 * Math.Pow(a, -4), 3e-21 * Math.Pow(a, -2)]);
        double worst = 0;
        for (double a = 1.5e-6; a < 4e-6; a *= 1.000731)
        {
            double exact = (1e-30 * Math.Pow(a, -4) + 3e-21 * Math.Pow(a, -2)) / 2;
            worst = Math.Max(worst, Math.Abs(curve.Mean(a) / exact - 1));
        }
        TestContext.Out.WriteLine($"largest relative error {worst:E2}");
        Assert.That(worst, Is.LessThan(1.4e-8));
        Assert.That(curve.PerTheory(2e-6), Is.EqualTo(new[] { 1e-30 * Math.Pow(2e-6, -4), 3e-21 * Math.Pow(2e-6, -2) }));
    }

    [Test]
    public void A_gap_that_is_not_positive_gives_not_a_number()
    {
        var curve = new ReferenceCasimirCurve(a => [Math.Pow(a, -4)]);
        Assert.That(curve.Mean(0), Is.NaN);
        Assert.That(curve.Mean(-1e-6), Is.NaN);
    }
}
