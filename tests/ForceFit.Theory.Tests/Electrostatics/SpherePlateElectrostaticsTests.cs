using ForceFit.Core.Constants;
using ForceFit.Theory.Electrostatics;

namespace ForceFit.Theory.Tests.Electrostatics;

/// <summary>Exact sphere–plate electrostatics (Smythe) against its limits and its capacitance.</summary>
public sealed class SpherePlateElectrostaticsTests
{
    private static readonly double Eps0 = Codata2018.VacuumPermittivity.Value;
    private const double R = 150e-6;

    [TestCase(1e-5)]
    [TestCase(1e-4)]
    [TestCase(1e-3)]
    public void Near_contact_the_force_tends_to_minus_pi_eps0_R_over_a(double aOverR)
    {
        // The gradient and third derivative follow from the same limit: pi eps0 R / a^2 and 6 pi eps0 R / a^4.
        // physics.md: F_el ~ −pi eps0 R (V − V0)^2 / a; the next correction is O(a/R) (and O(a/R) ln(a/R)).
        double a = aOverR * R;
        ElectrostaticResult e = SpherePlateElectrostatics.At(a, R);
        double tolerance = 5 * aOverR * Math.Max(1, -Math.Log(aOverR));
        Assert.That(e.Force / (-Math.PI * Eps0 * R / a), Is.EqualTo(1).Within(tolerance));
        Assert.That(e.Gradient / (Math.PI * Eps0 * R / (a * a)), Is.EqualTo(1).Within(tolerance));
        Assert.That(e.ThirdDerivative / (6 * Math.PI * Eps0 * R / Math.Pow(a, 4)), Is.EqualTo(1).Within(tolerance));
    }

    [TestCase(1e-5)]
    [TestCase(7e-4)]
    [TestCase(0.1)]
    [TestCase(1.0)]
    [TestCase(10.0)]
    public void The_force_series_is_half_the_derivative_of_the_Smythe_capacitance(double aOverR)
    {
        // F = (1/2) V^2 dC/da with C = 4 pi eps0 R sinh(alpha) Sum 1/sinh(n alpha) (Smythe): two different series.
        double a = aOverR * R;
        ElectrostaticResult e = SpherePlateElectrostatics.At(a, R);
        var c = SpherePlateElectrostatics.Capacitance(a, R);
        Assert.That(e.Force, Is.EqualTo(0.5 * c.D1).Within(1e-9).Percent);
        Assert.That(e.Gradient, Is.EqualTo(0.5 * c.D2).Within(1e-9).Percent);
        // The capacitance series' third derivative loses digits to cancellation near contact: compared from a/R = 1e-3 on.
        if (aOverR >= 1e-3) Assert.That(e.SecondDerivative, Is.EqualTo(0.5 * c.D3).Within(1e-7).Percent);
    }

    [TestCase(1e-5)]
    [TestCase(7e-4)]
    [TestCase(0.05)]
    [TestCase(1.0)]
    public void Gradient_and_third_derivative_agree_with_finite_differences(double aOverR)
    {
        double a = aOverR * R, h = a * 1e-3;
        double F(double x) => SpherePlateElectrostatics.At(x, R).Force;
        double G(double x) => SpherePlateElectrostatics.At(x, R).Gradient;
        ElectrostaticResult e = SpherePlateElectrostatics.At(a, R);
        double gradient = (F(a - 2 * h) - 8 * F(a - h) + 8 * F(a + h) - F(a + 2 * h)) / (12 * h);
        double third = (G(a - h) - 2 * G(a) + G(a + h)) / (h * h);
        Assert.That(e.Gradient, Is.EqualTo(gradient).Within(1e-7).Percent);
        Assert.That(e.ThirdDerivative, Is.EqualTo(third).Within(1e-3).Percent);
        double second = (G(a + h) - G(a - h)) / (2 * h);
        Assert.That(e.SecondDerivative, Is.EqualTo(second).Within(1e-3).Percent); // truncation ~ 2 (h/a)^2
    }

    [Test]
    public void Far_away_the_sphere_feels_its_image_charge()
    {
        // a >> R: an isolated sphere of capacitance 4 pi eps0 R; the force tends to that between the charge
        // Q = 4 pi eps0 R V and its image at distance 2(a + R): F = −Q^2 / (4 pi eps0 (2 D)^2), D = a + R.
        double a = 1000 * R, d = a + R;
        double q = 4 * Math.PI * Eps0 * R;
        double image = -q * q / (4 * Math.PI * Eps0 * 4 * d * d);
        Assert.That(SpherePlateElectrostatics.At(a, R).Force / image, Is.EqualTo(1).Within(3e-3));
    }
}
