using ForceFit.Theory.Geometry;
using ForceFit.Theory.Lifshitz;

namespace ForceFit.Theory.Tests.Geometry;

/// <summary>PFA, beyond-PFA and roughness corrections (physics.md, Sphere–plate geometry).</summary>
public sealed class SpherePlateTests
{
    // An ideal-metal-like power law P = −K a^-4 with exact derivatives, E = −(K/3) a^-3.
    private static LifshitzResult PowerLaw(double a, double k = 1e-27) =>
        new(-k / 3 / Math.Pow(a, 3), -k / Math.Pow(a, 4), 4 * k / Math.Pow(a, 5), -20 * k / Math.Pow(a, 6), 0, 0, 0, 0, 0, 0);

    [Test]
    public void PFA_gives_F_equal_2_pi_R_E_and_gradient_minus_2_pi_R_P()
    {
        double a = 200e-9, r = 150e-6;
        SpherePlateResult s = SpherePlate.FromLifshitz(a, PowerLaw(a), new SpherePlateGeometry(r));
        Assert.That(s.Force, Is.EqualTo(2 * Math.PI * r * PowerLaw(a).FreeEnergy).Within(1e-14).Percent);
        Assert.That(s.ForceGradient, Is.EqualTo(-2 * Math.PI * r * PowerLaw(a).Pressure).Within(1e-14).Percent);
        // The PFA force gradient is the derivative of the PFA force: d(2 pi R E)/da = −2 pi R P.
        double h = 1e-12;
        double numeric = (SpherePlate.FromLifshitz(a + h, PowerLaw(a + h), new SpherePlateGeometry(r)).Force
            - SpherePlate.FromLifshitz(a - h, PowerLaw(a - h), new SpherePlateGeometry(r)).Force) / (2 * h);
        Assert.That(s.ForceGradient, Is.EqualTo(numeric).Within(1e-6).Percent);
    }

    [Test]
    public void Roughness_rms_formula_gives_the_published_factors_for_power_laws()
    {
        // physics.md: 1 + n(n+1)/2 (delta1^2 + delta2^2)/a^2 — 6 for the sphere–plate force (n = 3), 10 for the pressure (n = 4).
        double a = 100e-9, d1 = 1.1e-9, d2 = 0.9e-9, s2 = d1 * d1 + d2 * d2;
        var smooth = SpherePlate.FromLifshitz(a, PowerLaw(a), new SpherePlateGeometry(150e-6));
        var rough = SpherePlate.FromLifshitz(a, PowerLaw(a), new SpherePlateGeometry(150e-6, RoughnessVariance: s2));
        Assert.That(rough.Force / smooth.Force, Is.EqualTo(1 + 6 * s2 / (a * a)).Within(1e-12));
        Assert.That(rough.Pressure / smooth.Pressure, Is.EqualTo(1 + 10 * s2 / (a * a)).Within(1e-12));
        Assert.That(rough.ForceGradient / smooth.ForceGradient, Is.EqualTo(1 + 10 * s2 / (a * a)).Within(1e-12));
    }

    [Test]
    public void Geometrical_averaging_over_a_Gaussian_distribution_matches_the_rms_formula_to_second_order()
    {
        // For a Gaussian distribution of variance s^2 the average of a^-4 is a^-4 (1 + 10 s^2/a^2 + 105 s^4/a^4 + ...)
        // (moments of the normal distribution), so the two agree up to O(s^4/a^4).
        double a = 100e-9, sigma = 2e-9;
        var distribution = new List<(double, double)>();
        for (int i = -400; i <= 400; i++)
        {
            double h = i * sigma / 50;
            distribution.Add((h, Math.Exp(-h * h / (2 * sigma * sigma))));
        }
        double average = SpherePlate.GeometricAverage(x => PowerLaw(x), a, distribution).Pressure;
        double rms = PowerLaw(a).Pressure * (1 + 10 * sigma * sigma / (a * a));
        double fourth = 105 * Math.Pow(sigma / a, 4);
        Assert.That(average / rms - 1, Is.EqualTo(fourth).Within(0.05 * fourth + 1e-12));
    }

    [Test]
    public void Beyond_PFA_correction_is_first_order_in_a_over_R()
    {
        double a = 500e-9, r = 100e-6, theta = 0.4;
        var pfa = SpherePlate.FromLifshitz(a, PowerLaw(a), new SpherePlateGeometry(r));
        var beyond = SpherePlate.FromLifshitz(a, PowerLaw(a), new SpherePlateGeometry(r, ThetaGradient: theta, ThetaForce: theta));
        Assert.That(beyond.ForceGradient / pfa.ForceGradient, Is.EqualTo(1 + theta * a / r).Within(1e-14));
        // F''' with theta: second derivative of −2 pi R P (1 + theta a/R), checked by differences.
        double G(double x) => SpherePlate.FromLifshitz(x, PowerLaw(x), new SpherePlateGeometry(r, ThetaGradient: theta)).ForceGradient;
        double h = 1e-10;
        Assert.That(beyond.ForceThirdDerivative, Is.EqualTo((G(a - h) - 2 * G(a) + G(a + h)) / (h * h)).Within(1e-4).Percent);
    }
}
