using System.Numerics;
using ForceFit.Core.Constants;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Permittivity;

namespace ForceFit.Theory.Tests.Permittivity;

/// <summary>
/// The Kramers–Kronig path: a Drude–Lorentz dielectric function, tabulated as n and k and fed through the
/// optical-data model, must reproduce its own analytic eps(i xi). The model's real-frequency form is
/// eps(omega) = 1 − wp^2/(omega (omega + i gamma)) + g/(w^2 − omega^2 − i gamma_o omega), whose continuation to
/// omega = i xi is the Drude plus oscillator form of physics.md.
/// </summary>
public sealed class OpticalDataModelTests
{
    private static readonly double EV = Codata2018.ElectronVoltAngularFrequency.Value;
    // Illustrative parameters (a gold-like Drude term and one interband oscillator, invented for this check).
    private static readonly double Wp = 9.0 * EV, Gamma = 0.035 * EV, G = 40 * EV * EV, W = 4.0 * EV, GammaO = 1.5 * EV;

    private static Complex EpsilonReal(double omega) =>
        1 - Wp * Wp / (omega * new Complex(omega, Gamma)) + G / new Complex(W * W - omega * omega, -GammaO * omega);

    private static double EpsilonImaginaryAxis(double xi) => 1 + Wp * Wp / (xi * (xi + Gamma)) + G / (W * W + xi * xi + GammaO * xi);

    private static OpticalDataModel Tabulated(int points, double fromEv = 0.05, double toEv = 500)
    {
        var omega = new double[points];
        var n = new double[points];
        var k = new double[points];
        for (int i = 0; i < points; i++)
        {
            omega[i] = fromEv * EV * Math.Pow(toEv / fromEv, i / (points - 1.0));
            Complex root = Complex.Sqrt(EpsilonReal(omega[i])); // n + i k
            n[i] = root.Real;
            k[i] = root.Imaginary;
        }
        return new OpticalDataModel(omega, n, k, OpticalTail.Drude, Wp, Gamma);
    }

    [Test]
    public void Reproduces_the_analytic_permittivity_to_1e_5_over_the_Matsubara_range()
    {
        // Matsubara frequencies that matter from 20 nm to 10 um at 1 K – 600 K lie between about 0.05 eV and 50 eV.
        OpticalDataModel model = Tabulated(6000);
        double worst = 0;
        for (int i = 0; i <= 60; i++)
        {
            double xi = 0.05 * EV * Math.Pow(1000, i / 60.0);
            worst = Math.Max(worst, Math.Abs(model.At(xi) / EpsilonImaginaryAxis(xi) - 1));
        }
        Assert.That(worst, Is.LessThan(1e-5));
    }

    [Test]
    public void The_error_falls_as_the_table_gets_denser()
    {
        double Error(int points)
        {
            OpticalDataModel model = Tabulated(points);
            double xi = 2 * EV;
            return Math.Abs(model.At(xi) / EpsilonImaginaryAxis(xi) - 1);
        }
        // Piecewise-linear eps'' converges as the square of the spacing.
        Assert.That(Error(3000) / Error(750), Is.LessThan(1.0 / 8));
    }

    [Test]
    public void Eps_imaginary_part_is_two_n_k()
    {
        OpticalDataModel model = Tabulated(10);
        Assert.That(model.ImaginaryPartAt(3), Is.EqualTo(EpsilonReal(0.05 * EV * Math.Pow(10000, 3 / 9.0)).Imaginary).Within(1e-10).Percent);
    }

    [Test]
    public void Casimir_pressure_from_optical_data_matches_the_analytic_model()
    {
        // The whole path: Lifshitz with the tabulated model against Lifshitz with the analytic Drude + oscillator model.
        var analytic = new AnalyticDrudeLorentz();
        OpticalDataModel tabulated = Tabulated(6000);
        double p1 = new LifshitzCalculator(tabulated, tabulated, 300).At(200e-9).Pressure;
        double p2 = new LifshitzCalculator(analytic, analytic, 300).At(200e-9).Pressure;
        Assert.That(p1 / p2, Is.EqualTo(1).Within(1e-5));
    }

    private sealed class AnalyticDrudeLorentz : IPermittivity
    {
        public double At(double xi) => EpsilonImaginaryAxis(xi);
        public bool IsConductor => true;
        public double Static => double.PositiveInfinity;
        public double ZeroFrequencyPlasmaSquared => 0;
        public string Describe() => "analytic Drude + oscillator";
    }
}
