namespace ForceFit.Theory.Geometry;

/// <summary>
/// The force gradient sensed by an oscillator of amplitude A at mean gap a: &lt;F'&gt; = (2/pi) Integral_{-1}^{1}
/// F'(a + A u) sqrt(1 − u^2) du, equivalent by parts to the first-order frequency shift
/// −(f0/(pi k A)) Integral F(a + A u) u / sqrt(1 − u^2) du (F. J. Giessibl, Phys. Rev. B 56, 16010 (1997));
/// it reduces to F' + (A^2/8) F''' for small A (physics.md).
/// </summary>
public static class AmplitudeAverage
{
    // Gauss–Chebyshev rule of the second kind: Integral_{-1}^{1} f(u) sqrt(1 − u^2) du = Sum w_i f(u_i),
    // u_i = cos(i pi/(n+1)), w_i = pi/(n+1) sin^2(i pi/(n+1)) (Abramowitz & Stegun 25.4.40).
    private const int Nodes = 48;
    private static readonly double[] U = Enumerable.Range(1, Nodes).Select(i => Math.Cos(i * Math.PI / (Nodes + 1))).ToArray();
    private static readonly double[] W = Enumerable.Range(1, Nodes).Select(i => Math.PI / (Nodes + 1) * Math.Pow(Math.Sin(i * Math.PI / (Nodes + 1)), 2)).ToArray();

    /// <summary>&lt;F'&gt; for a gradient function, mean gap and amplitude.</summary>
    public static double Gradient(Func<double, double> gradient, double a, double amplitude)
    {
        double sum = 0;
        for (int i = 0; i < Nodes; i++) sum += W[i] * gradient(a + amplitude * U[i]);
        return 2 / Math.PI * sum;
    }
}
