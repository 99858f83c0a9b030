using ForceFit.Core.Constants;

namespace ForceFit.Core.Tests.Constants;

/// <summary>
/// CODATA 2018 (E. Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021), table XXXI), values as printed there.
/// Each literal below is the published decimal; the comparison is bit for bit.
/// </summary>
public sealed class Codata2018Tests
{
    [TestCase("c", "299792458")]
    [TestCase("h", "6.62607015e-34")]
    [TestCase("e", "1.602176634e-19")]
    [TestCase("k_B", "1.380649e-23")]
    [TestCase("epsilon_0", "8.8541878128e-12")]
    [TestCase("mu_0", "1.25663706212e-6")]
    public void Defining_and_measured_values_are_the_published_digits_bit_for_bit(string symbol, string published)
    {
        PhysicalConstant c = Codata2018.All.Single(k => k.Symbol == symbol);
        double expected = double.Parse(published, System.Globalization.CultureInfo.InvariantCulture);
        Assert.That(BitConverter.DoubleToInt64Bits(c.Value), Is.EqualTo(BitConverter.DoubleToInt64Bits(expected)));
        Assert.That(c.Reference, Does.Contain("CODATA 2018"));
    }

    [Test]
    public void Uncertainties_are_the_published_ones()
    {
        // epsilon_0 = 8.8541878128(13)e-12 F/m and mu_0 = 1.25663706212(19)e-6 N/A^2 (CODATA 2018).
        Assert.That(Codata2018.VacuumPermittivity.Uncertainty, Is.EqualTo(0.0000000013e-12).Within(1e-6).Percent);
        Assert.That(Codata2018.VacuumPermeability.Uncertainty, Is.EqualTo(0.00000000019e-6).Within(1e-6).Percent);
        foreach (var exact in new[] { Codata2018.SpeedOfLight, Codata2018.Planck, Codata2018.ElementaryCharge, Codata2018.Boltzmann, Codata2018.ReducedPlanck })
            Assert.That(exact.IsExact, exact.Name);
    }

    [Test]
    public void Derived_values_match_the_published_derived_values()
    {
        // CODATA 2018 lists hbar = 1.054 571 817... e-34 J s and hbar = 6.582 119 569... e-16 eV s (both truncated, exact).
        Assert.That(Codata2018.ReducedPlanck.Value, Is.EqualTo(1.054571817e-34).Within(1e-9 * 1.054571817e-34));
        Assert.That(Codata2018.ReducedPlanck.Value / Codata2018.ElementaryCharge.Value, Is.EqualTo(6.582119569e-16).Within(1e-9 * 6.582119569e-16));
        // physics.md: 1 eV / hbar = 1.519 267 447e15 rad/s.
        Assert.That(Codata2018.ElectronVoltAngularFrequency.Value, Is.EqualTo(1.519267447e15).Within(1e-9 * 1.519267447e15));
    }

    [Test]
    public void Epsilon0_and_mu0_satisfy_c_squared_within_their_uncertainty()
    {
        // In the 2019 SI, mu_0 eps_0 c^2 = 1 exactly; CODATA's rounded values satisfy it to ~1e-10 relative.
        double product = Codata2018.VacuumPermittivity.Value * Codata2018.VacuumPermeability.Value * Math.Pow(Codata2018.SpeedOfLight.Value, 2);
        Assert.That(product, Is.EqualTo(1.0).Within(3e-10));
    }
}
