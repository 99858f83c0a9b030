using ForceFit.Core.Constants;
using ForceFit.Theory.Numerics;

namespace ForceFit.Theory.Electrostatics;

/// <summary>Electrostatic force of a sphere over a plate per volt squared, with its derivatives in the gap.</summary>
/// <param name="Force">F / (V − V0)^2 in N/V^2 (negative: attraction).</param>
/// <param name="Gradient">F' / (V − V0)^2 in N/(m V^2).</param>
/// <param name="SecondDerivative">F'' / (V − V0)^2.</param>
/// <param name="ThirdDerivative">F''' / (V − V0)^2.</param>
/// <param name="Terms">Series terms summed.</param>
public sealed record ElectrostaticResult(double Force, double Gradient, double SecondDerivative, double ThirdDerivative, int Terms);

/// <summary>
/// Exact sphere–plate electrostatics (W. R. Smythe, Static and Dynamic Electricity, 3rd ed. (1968); physics.md):
/// F = 2 pi eps0 (V − V0)^2 Sum_{n>=1} csch(n alpha) (coth alpha − n coth(n alpha)), cosh alpha = 1 + a/R,
/// summed to convergence; derivatives in a are exact (Taylor arithmetic through alpha(a)).
/// </summary>
public static class SpherePlateElectrostatics
{
    private static readonly double Eps0 = Codata2018.VacuumPermittivity.Value;

    /// <summary>Force and derivatives per volt squared at gap a for sphere radius R (both in m).</summary>
    public static ElectrostaticResult At(double gap, double radius)
    {
        Check(gap, radius);
        Jet alpha = Alpha(gap, radius);
        (Jet sum, int n) = SeriesInAlpha(alpha.V);
        Jet inGap = ChainToGap(sum, alpha);
        double k = 2 * Math.PI * Eps0;
        return new ElectrostaticResult(k * inGap.V, k * inGap.D1, k * inGap.D2, k * inGap.D3, n);
    }

    /// <summary>S(alpha) = Sum_{n>=1} csch(n alpha)(coth alpha − n coth(n alpha)) and its alpha-derivatives, with the number of terms.</summary>
    public static (Jet Sum, int Terms) SeriesInAlpha(double alpha)
    {
        // coth(alpha) − n coth(n alpha) = g(alpha) − n g(n alpha) with g(x) = coth x − 1/x: the 1/alpha parts cancel
        // exactly, which keeps the third derivative accurate near contact (a/R ~ 1e-5).
        Jet gA = CothMinusInverse(alpha);
        Jet sum = default;
        int n = 1;
        for (; ; n++)
        {
            double x = n * alpha;
            Jet csch = CschOfMultiple(n, alpha);
            Jet gN = CothMinusInverse(x);
            Jet nG = new(n * gN.V, (double)n * n * gN.D1, (double)n * n * n * gN.D2, (double)n * n * n * n * gN.D3);
            Jet term = csch * (gA - nG);
            sum += term;
            if (n > 2 && Negligible(term, sum)) break;
            if (n > 50_000_000) throw new InvalidOperationException("sphere-plate series did not converge");
        }
        return (sum, n);
    }

    /// <summary>
    /// Sphere–plate capacitance C = 4 pi eps0 R sinh(alpha) Sum_{n>=1} 1/sinh(n alpha) (Smythe) with its
    /// derivatives in the gap; F = (1/2) (V − V0)^2 dC/da.
    /// </summary>
    public static Jet Capacitance(double gap, double radius)
    {
        Check(gap, radius);
        Jet alpha = Alpha(gap, radius);
        double sh = Math.Sinh(alpha.V), ch = Math.Cosh(alpha.V);
        Jet sinhA = new(sh, ch, sh, ch);
        Jet sum = default;
        for (int n = 1; ; n++)
        {
            double x = n * alpha.V;
            Jet csch = CschOfMultiple(n, alpha.V);
            sum += csch;
            if (n > 2 && Negligible(csch, sum)) break;
        }
        Jet c = (4 * Math.PI * Eps0 * radius) * (sinhA * sum);
        return ChainToGap(c, alpha);
    }

    private static void Check(double gap, double radius)
    {
        if (!(gap > 0)) throw new ArgumentOutOfRangeException(nameof(gap), "gap must be positive");
        if (!(radius > 0)) throw new ArgumentOutOfRangeException(nameof(radius), "radius must be positive");
    }

    /// <summary>alpha(a) = acosh(1 + a/R) as a jet in a; computed without cancellation near contact.</summary>
    private static Jet Alpha(double gap, double radius)
    {
        double s = gap / radius;
        double w = s * (2 + s); // u^2 − 1 with u = 1 + s
        double value = Math.Log(1 + s + Math.Sqrt(w)); // acosh(1 + s)
        double u = 1 + s, root = Math.Sqrt(w);
        // d/du acosh u = (u^2−1)^(−1/2); second −u (u^2−1)^(−3/2); third (2u^2 + 1)(u^2−1)^(−5/2); du/da = 1/R.
        double h1 = 1 / root, h2 = -u / (w * root), h3 = (2 * u * u + 1) / (w * w * root);
        return new Jet(value, h1 / radius, h2 / (radius * radius), h3 / (radius * radius * radius));
    }

    /// <summary>f(alpha(a)): f is a jet in alpha, alpha a jet in a.</summary>
    private static Jet ChainToGap(Jet f, Jet alpha) => alpha.Compose(f.V, f.D1, f.D2, f.D3);

    private static bool Negligible(Jet term, Jet sum) =>
        Math.Abs(term.V) <= 1e-17 * Math.Abs(sum.V) && Math.Abs(term.D1) <= 1e-17 * Math.Abs(sum.D1)
        && Math.Abs(term.D2) <= 1e-17 * Math.Abs(sum.D2) && Math.Abs(term.D3) <= 1e-17 * Math.Abs(sum.D3);

    // 2^{2k} B_{2k} / (2k)! for k = 1..10, B_{2k} the Bernoulli numbers: coth x = 1/x + Sum c_k x^{2k-1}
    // (Abramowitz & Stegun 4.5.67).
    private static readonly double[] CothSeries = BuildCothSeries();

    private static double[] BuildCothSeries()
    {
        double[] bernoulli = [1.0 / 6, -1.0 / 30, 1.0 / 42, -1.0 / 30, 5.0 / 66, -691.0 / 2730, 7.0 / 6, -3617.0 / 510, 43867.0 / 798, -174611.0 / 330];
        var c = new double[bernoulli.Length];
        double factorial = 1;
        for (int k = 1; k <= bernoulli.Length; k++)
        {
            factorial *= (2 * k - 1) * (2 * k);
            c[k - 1] = Math.Pow(2, 2 * k) * bernoulli[k - 1] / factorial;
        }
        return c;
    }

    /// <summary>g(x) = coth x − 1/x and its first three derivatives; the Bernoulli series below x = 0.5.</summary>
    private static Jet CothMinusInverse(double x)
    {
        if (x >= 0.5)
        {
            double coth = 1 / Math.Tanh(x), csch2 = Square(1 / Math.Sinh(x)), inv = 1 / x;
            return new Jet(coth - inv, -csch2 + inv * inv, 2 * csch2 * coth - 2 * inv * inv * inv,
                -2 * csch2 * (csch2 + 2 * coth * coth) + 6 * inv * inv * inv * inv);
        }
        double v = 0, d1 = 0, d2 = 0, d3 = 0;
        for (int k = CothSeries.Length; k >= 1; k--)
        {
            int p = 2 * k - 1; // term c x^p
            double c = CothSeries[k - 1];
            v += c * Math.Pow(x, p);
            d1 += c * p * Math.Pow(x, p - 1);
            if (p >= 2) d2 += c * p * (p - 1) * Math.Pow(x, p - 2);
            if (p >= 3) d3 += c * p * (p - 1) * (p - 2) * Math.Pow(x, p - 3);
        }
        return new Jet(v, d1, d2, d3);
    }

    /// <summary>csch(n alpha) as a jet in alpha; d/dx csch = −csch coth, then csch (coth^2 + csch^2), −csch coth (coth^2 + 5 csch^2).</summary>
    private static Jet CschOfMultiple(int n, double alpha)
    {
        double x = n * alpha;
        double coth = 1 / Math.Tanh(x), csch = 1 / Math.Sinh(x), csch2 = csch * csch;
        double n2 = (double)n * n;
        return new Jet(csch, -n * csch * coth, n2 * csch * (coth * coth + csch2), -n2 * n * csch * coth * (coth * coth + 5 * csch2));
    }

    private static double Square(double x) => x * x;
}
