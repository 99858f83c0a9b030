using ForceFit.Core.Constants;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Permittivity;

namespace ForceFit.Theory.Tests.Lifshitz;

/// <summary>Dielectrics (Lorentz model) and the generalized plasma model in Lifshitz theory.</summary>
public sealed class DielectricTests
{
    private static readonly double Hbar = Codata2018.ReducedPlanck.Value;
    private static readonly double C = Codata2018.SpeedOfLight.Value;
    private static readonly double EV = Codata2018.ElectronVoltAngularFrequency.Value;

    [Test]
    public void Dilute_nondispersive_dielectrics_follow_the_retarded_pairwise_limit()
    {
        // For eps − 1 = d << 1 at all frequencies, Lifshitz theory at T = 0 gives
        // P = −(23 / (640 pi^2)) hbar c d^2 / a^4 (the Casimir–Polder pairwise sum; E. M. Lifshitz 1956, quoted
        // from memory). The next order is O(d^3).
        double d = 1e-3;
        var dilute = new LorentzModel(1 + d, []);
        double a = 1e-6;
        LifshitzResult r = new LifshitzCalculator(dilute, dilute, 0).At(a);
        double expected = -23.0 / (640 * Math.PI * Math.PI) * Hbar * C * d * d / Math.Pow(a, 4);
        Assert.That(r.Pressure / expected, Is.EqualTo(1).Within(3 * d));
    }

    [Test]
    public void A_dielectric_zero_frequency_term_uses_the_static_permittivity()
    {
        // High-temperature limit for two dielectrics: only the l = 0 TM term survives,
        // P → −(k_B T / (8 pi a^3)) Li3(r^2), r = (eps0 − 1)/(eps0 + 1) (physics.md; Li3 via its series).
        var glass = new LorentzModel(1.0, [new Oscillator(2.0 * Math.Pow(10 * EV, 2), 10 * EV, 0)]); // eps(0) = 3
        double T = 300, a = 20e-6;
        LifshitzResult r = new LifshitzCalculator(glass, glass, T).At(a);
        double rr = Math.Pow((3.0 - 1) / (3.0 + 1), 2);
        double li3 = 0;
        for (int n = 1; n < 200; n++) li3 += Math.Pow(rr, n) / Math.Pow(n, 3);
        double expected = -Codata2018.Boltzmann.Value * T / (8 * Math.PI * a * a * a) * li3;
        Assert.That(r.Pressure / expected, Is.EqualTo(1).Within(1e-6));
    }

    [Test]
    public void Generalized_plasma_without_oscillators_is_the_plasma_model()
    {
        double wp = 9 * EV;
        var gp = new GeneralizedPlasmaModel(wp, []);
        var plasma = new PlasmaModel(wp);
        foreach (double a in new[] { 50e-9, 500e-9 })
        {
            double p1 = new LifshitzCalculator(gp, gp, 300).At(a).Pressure;
            double p2 = new LifshitzCalculator(plasma, plasma, 300).At(a).Pressure;
            Assert.That(p1, Is.EqualTo(p2).Within(1e-12).Percent);
        }
    }

    [Test]
    public void Core_electron_oscillators_add_attraction_at_short_range_and_vanish_at_long_range()
    {
        // The oscillators raise eps(i xi) only at xi of order their frequency (eV): they matter at short separations
        // (c/2a comparable to w_j) and not far away, where the zero-frequency plasma limit is the same.
        double wp = 9 * EV;
        var gp = new GeneralizedPlasmaModel(wp, [new Oscillator(40 * EV * EV, 4 * EV, 1.5 * EV)]);
        var plasma = new PlasmaModel(wp);
        double Ratio(double a) => new LifshitzCalculator(gp, gp, 300).At(a).Pressure / new LifshitzCalculator(plasma, plasma, 300).At(a).Pressure;
        Assert.That(Ratio(30e-9), Is.GreaterThan(1.01));
        Assert.That(Ratio(10e-6), Is.EqualTo(1).Within(1e-4));
    }
}
