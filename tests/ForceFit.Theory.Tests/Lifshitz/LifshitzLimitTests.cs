using ForceFit.Core.Constants;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Numerics;
using ForceFit.Theory.Permittivity;

namespace ForceFit.Theory.Tests.Lifshitz;

/// <summary>Lifshitz theory against published analytic limits (physics.md, Lifshitz theory).</summary>
public sealed class LifshitzLimitTests
{
    private static readonly double Hbar = Codata2018.ReducedPlanck.Value;
    private static readonly double C = Codata2018.SpeedOfLight.Value;
    private static readonly double KB = Codata2018.Boltzmann.Value;
    private static readonly double EV = Codata2018.ElectronVoltAngularFrequency.Value;

    private static double CasimirPressure(double a) => -Math.PI * Math.PI * Hbar * C / (240 * Math.Pow(a, 4));
    private static double CasimirEnergy(double a) => -Math.PI * Math.PI * Hbar * C / (720 * Math.Pow(a, 3));

    [Test]
    public void Plasma_model_reaches_the_ideal_metal_Casimir_result_as_wp_grows()
    {
        // H. B. G. Casimir, Proc. K. Ned. Akad. Wet. 51, 793 (1948): P = −pi^2 hbar c / (240 a^4), E = −pi^2 hbar c / (720 a^3).
        double a = 1e-6;
        double previous = double.MaxValue;
        foreach (double wpEv in new[] { 9.0, 90.0, 900.0, 9e5 })
        {
            var metal = new PlasmaModel(wpEv * EV);
            LifshitzResult r = new LifshitzCalculator(metal, metal, 0).At(a);
            double deviation = Math.Abs(r.Pressure / CasimirPressure(a) - 1);
            Assert.That(deviation, Is.LessThan(previous), $"wp = {wpEv} eV");
            previous = deviation;
            if (wpEv == 9e5)
            {
                // d = delta/a = c/(wp a) = 2.2e-7 here: only the first-order terms of the plasma expansion remain
                // (P: −(16/3) d, E: −4 d; Bordag, Mohideen, Mostepanenko 2001), the rest is O(d^2) ~ 1e-13.
                double d = C / (wpEv * EV * a);
                Assert.That(r.Pressure / CasimirPressure(a), Is.EqualTo(1 - 16.0 / 3 * d).Within(1e-10));
                Assert.That(r.FreeEnergy / CasimirEnergy(a), Is.EqualTo(1 - 4 * d).Within(1e-10));
            }
        }
    }

    [TestCase(1e-6)]
    [TestCase(2e-6)]
    [TestCase(5e-6)]
    public void Plasma_model_follows_the_published_expansion_in_delta_over_a(double a)
    {
        // M. Bordag, U. Mohideen, V. M. Mostepanenko, Phys. Rep. 353, 1 (2001): at T = 0 for the plasma model,
        // P = P0 [1 − (16/3) d + 24 d^2 − (640/7)(1 − pi^2/210) d^3 + ...], d = delta/a, delta = c/wp
        // (coefficients quoted from memory of that review). The energy follows by integration: E = E0 [1 − 4 d + (72/5) d^2 − ...].
        double wp = 9.0 * EV, delta = C / wp, d = delta / a;
        var gold = new PlasmaModel(wp);
        LifshitzResult r = new LifshitzCalculator(gold, gold, 0).At(a);
        double third = 640.0 / 7 * (1 - Math.PI * Math.PI / 210) * d * d * d;
        double expectedP = 1 - 16.0 / 3 * d + 24 * d * d - third;
        Assert.That(r.Pressure / CasimirPressure(a), Is.EqualTo(expectedP).Within(3 * 1000 * Math.Pow(d, 4)));
        double expectedE = 1 - 4 * d + 72.0 / 5 * d * d;
        Assert.That(r.FreeEnergy / CasimirEnergy(a), Is.EqualTo(expectedE).Within(150 * d * d * d));
    }

    [TestCase(1e-6, 300.0)]
    [TestCase(3e-6, 100.0)]
    [TestCase(0.5e-6, 600.0)]
    public void Ideal_metal_at_low_temperature_gains_a_third_of_T_over_Teff_to_the_fourth(double a, double temperature)
    {
        // Low-temperature ideal metal: P = P0 (1 + (1/3)(T/T_eff)^4), T_eff = hbar c / (2 a k_B), up to terms
        // exponentially small in T_eff/T (L. S. Brown, G. J. Maclay, Phys. Rev. 184, 1272 (1969)). Those terms reach
        // 1e-4 at T/T_eff = 0.5, so the cases keep T/T_eff = 0.26; the metal is a plasma with wp = 1e6 eV, whose
        // −(16/3) delta/a correction is divided out.
        var ideal = new PlasmaModel(1e6 * EV);
        LifshitzResult r = new LifshitzCalculator(ideal, ideal, temperature).At(a);
        double tEff = Hbar * C / (2 * a * KB);
        double d = C / (1e6 * EV * a);
        double expected = CasimirPressure(a) * (1 + Math.Pow(temperature / tEff, 4) / 3) * (1 - 16.0 / 3 * d);
        Assert.That(r.Pressure / expected, Is.EqualTo(1).Within(2e-6));
    }

    [Test]
    public void Drude_model_at_large_separation_tends_to_the_classical_limit_and_plasma_to_twice_it()
    {
        // High-temperature limit: Drude P → −zeta(3) k_B T / (8 pi a^3), half the ideal-metal value; the plasma
        // model keeps the TE zero-frequency term and approaches twice that (physics.md).
        var drude = new DrudeModel(9.0 * EV, 0.035 * EV);
        var plasma = new PlasmaModel(9.0 * EV);
        double T = 300;
        double Limit(double a) => -SpecialFunctions.Zeta3 * KB * T / (8 * Math.PI * a * a * a);
        LifshitzResult d20 = new LifshitzCalculator(drude, drude, T).At(20e-6);
        Assert.That(d20.Pressure / Limit(20e-6), Is.EqualTo(1).Within(1e-6));
        double ratio10 = new LifshitzCalculator(plasma, plasma, T).At(10e-6).Pressure / Limit(10e-6);
        double ratio40 = new LifshitzCalculator(plasma, plasma, T).At(40e-6).Pressure / Limit(40e-6);
        // The plasma TE zero-frequency reflection differs from −1 by O(c/(wp a)): the approach to 2 is slow.
        Assert.That(ratio10, Is.EqualTo(2).Within(0.02));
        Assert.That(Math.Abs(ratio40 - 2), Is.LessThan(Math.Abs(ratio10 - 2) / 2));
    }

    [TestCase(0.0)]
    [TestCase(300.0)]
    public void Pressure_and_its_derivatives_are_the_derivatives_of_the_free_energy(double temperature)
    {
        // P = −dE/da (physics.md); dP/da and d²P/da² by central differences of the same calculator.
        var drude = new DrudeModel(9.0 * EV, 0.035 * EV);
        var calc = new LifshitzCalculator(drude, drude, temperature);
        // Five-point stencil f'(a) = (f(a−2h) − 8 f(a−h) + 8 f(a+h) − f(a+2h)) / 12h, truncation O(h^4) ~ 1e-8 here.
        double a = 200e-9, h = 2e-9;
        LifshitzResult r = calc.At(a), m2 = calc.At(a - 2 * h), m1 = calc.At(a - h), p1 = calc.At(a + h), p2 = calc.At(a + 2 * h);
        double D(Func<LifshitzResult, double> f) => (f(m2) - 8 * f(m1) + 8 * f(p1) - f(p2)) / (12 * h);
        Assert.That(-D(x => x.FreeEnergy), Is.EqualTo(r.Pressure).Within(1e-4).Percent);
        Assert.That(D(x => x.Pressure), Is.EqualTo(r.PressureDerivative).Within(1e-4).Percent);
        Assert.That(D(x => x.PressureDerivative), Is.EqualTo(r.PressureSecondDerivative).Within(1e-4).Percent);
    }

    [Test]
    public void Matsubara_sum_at_very_low_temperature_approaches_the_zero_temperature_integral()
    {
        // Two independent code paths: the T = 0 frequency integral and the Matsubara sum at 1 K, where thermal
        // corrections at 100 nm are far below 1e-6 for a plasma metal.
        var plasma = new PlasmaModel(9.0 * EV);
        LifshitzResult zero = new LifshitzCalculator(plasma, plasma, 0).At(100e-9);
        LifshitzResult cold = new LifshitzCalculator(plasma, plasma, 1.0).At(100e-9);
        Assert.That(cold.Pressure / zero.Pressure, Is.EqualTo(1).Within(1e-6));
        Assert.That(cold.FreeEnergy / zero.FreeEnergy, Is.EqualTo(1).Within(1e-6));
    }

    [TestCase("drude", 300.0, 20e-9)]
    [TestCase("drude", 300.0, 100e-9)]
    [TestCase("plasma", 300.0, 1e-6)]
    [TestCase("drude", 600.0, 10e-6)]
    [TestCase("plasma", 77.0, 50e-9)]
    [TestCase("drude", 0.0, 300e-9)]
    public void Default_accuracy_is_1e_6_and_the_error_estimate_covers_it(string model, double temperature, double a)
    {
        // Reference: the same sums with 3x the nodes and a 1e-13 tolerance (a convergence test, not an outside value).
        IPermittivity m = model == "drude" ? new DrudeModel(9.0 * EV, 0.035 * EV) : new PlasmaModel(9.0 * EV);
        LifshitzResult r = new LifshitzCalculator(m, m, temperature).At(a);
        LifshitzResult reference = new LifshitzCalculator(m, m, temperature, new LifshitzOptions(1e-13, 120)).At(a);
        Assert.That(r.Pressure / reference.Pressure, Is.EqualTo(1).Within(1e-6));
        Assert.That(r.FreeEnergy / reference.FreeEnergy, Is.EqualTo(1).Within(1e-6));
        Assert.That(Math.Abs(r.Pressure - reference.Pressure), Is.LessThanOrEqualTo(Math.Max(r.PressureError, 1e-14 * Math.Abs(r.Pressure))));
    }

    [Test]
    public void Trilogarithm_matches_zeta3_and_a_known_value()
    {
        // Li3(1) = zeta(3); Li3(1/2) = (7/8) zeta(3) − (pi^2/12) ln 2 + (ln 2)^3 / 6 (L. Lewin, Polylogarithms, 1981).
        double ln2 = Math.Log(2);
        Assert.That(SpecialFunctions.Trilogarithm(1), Is.EqualTo(1.2020569031595942854));
        Assert.That(SpecialFunctions.Trilogarithm(0.5), Is.EqualTo(7.0 / 8 * SpecialFunctions.Zeta3 - Math.PI * Math.PI / 12 * ln2 + ln2 * ln2 * ln2 / 6).Within(1e-15));
    }
}
