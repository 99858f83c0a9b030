using ForceFit.Theory.Electrostatics;
using ForceFit.Theory.Geometry;
using ForceFit.Theory.Lifshitz;

namespace ForceFit.Simulation;

/// <summary>
/// A function of the gap tabulated with its derivative on log-spaced nodes and read back by cubic Hermite
/// interpolation (error O(h^4), about 1e-12 relative with the default spacing).
/// </summary>
public sealed class HermiteTable
{
    private readonly double _logLow, _step;
    private readonly double[] _x, _f, _df;

    /// <summary>Tabulates f and its derivative over [low, high] on <paramref name="nodes"/> log-spaced gaps.</summary>
    public HermiteTable(double low, double high, int nodes, Func<double, (double F, double Df)> function)
    {
        _logLow = Math.Log(low);
        _step = (Math.Log(high) - _logLow) / (nodes - 1);
        _x = new double[nodes];
        _f = new double[nodes];
        _df = new double[nodes];
        double[] x = _x, f = _f, df = _df;
        Parallel.For(0, nodes, i =>
        {
            x[i] = Math.Exp(_logLow + i * _step);
            (f[i], df[i]) = function(x[i]);
        });
    }

    /// <summary>Lowest tabulated gap.</summary>
    public double Low => _x[0];

    /// <summary>Highest tabulated gap.</summary>
    public double High => _x[^1];

    /// <summary>The interpolated value at gap a (must lie inside the table).</summary>
    public double At(double a)
    {
        if (!(a >= _x[0] && a <= _x[^1])) throw new ArgumentOutOfRangeException(nameof(a), $"gap {a:G4} m is outside the simulator's table [{_x[0]:G4}, {_x[^1]:G4}] m");
        int i = Math.Min(_x.Length - 2, (int)((Math.Log(a) - _logLow) / _step));
        double x0 = _x[i], x1 = _x[i + 1], h = x1 - x0, t = (a - x0) / h;
        double t2 = t * t, t3 = t2 * t;
        // Cubic Hermite basis.
        return (2 * t3 - 3 * t2 + 1) * _f[i] + (t3 - 2 * t2 + t) * h * _df[i] + (-2 * t3 + 3 * t2) * _f[i + 1] + (t3 - t2) * h * _df[i + 1];
    }
}

/// <summary>
/// The forces the simulated sphere feels: Casimir (Lifshitz + PFA with the chosen theory) and exact
/// sphere–plate electrostatics, each tabulated once for the run's gap range.
/// </summary>
public sealed class ForceModel
{
    private readonly HermiteTable _casimirForce, _casimirGradient, _electricForce, _electricGradient;

    /// <summary>Tabulates the forces between <paramref name="low"/> and <paramref name="high"/> (m).</summary>
    public ForceModel(LifshitzCalculator casimir, SpherePlateGeometry geometry, double low, double high, int nodes = 1500)
    {
        Geometry = geometry;
        SpherePlateResult Casimir(double a) => SpherePlate.FromLifshitz(a, casimir.At(a), geometry);
        // F and its derivative F'; F' and F'' = −2 pi R dP/da (1 + theta a/R) − 2 pi R P theta/R.
        _casimirForce = new HermiteTable(low, high, nodes, a => { var s = Casimir(a); return (s.Force, s.ForceGradient); });
        // F' with its derivative F'' = −2 pi R [P' (1 + theta a/R) + P theta/R]; with roughness the rough P' needs
        // P''', which the theory does not give, so F'' is then the central difference of the rough F' (step 1e-4 a).
        _casimirGradient = new HermiteTable(low, high, nodes, a =>
        {
            LifshitzResult r = casimir.At(a);
            double gradient = SpherePlate.FromLifshitz(a, r, geometry).ForceGradient;
            if (geometry.RoughnessVariance > 0)
            {
                double h = 1e-4 * a;
                double up = Casimir(a + h).ForceGradient, down = Casimir(a - h).ForceGradient;
                return (gradient, (up - down) / (2 * h));
            }
            double theta = geometry.ThetaGradient, radius = geometry.Radius;
            return (gradient, -2 * Math.PI * radius * (r.PressureDerivative * (1 + theta * a / radius) + r.Pressure * theta / radius));
        });
        _electricForce = new HermiteTable(low, high, nodes, a => { var e = SpherePlateElectrostatics.At(a, geometry.Radius); return (e.Force, e.Gradient); });
        _electricGradient = new HermiteTable(low, high, nodes, a => { var e = SpherePlateElectrostatics.At(a, geometry.Radius); return (e.Gradient, e.SecondDerivative); });
    }

    /// <summary>The geometry used.</summary>
    public SpherePlateGeometry Geometry { get; }

    /// <summary>Lowest gap the tables cover.</summary>
    public double Low => _casimirForce.Low;

    /// <summary>Force on the sphere (N) at gap a with effective bias V − V0.</summary>
    public double Force(double a, double effectiveBias) => _casimirForce.At(a) + _electricForce.At(a) * effectiveBias * effectiveBias;

    /// <summary>Force gradient (N/m) at gap a.</summary>
    public double Gradient(double a, double effectiveBias) => _casimirGradient.At(a) + _electricGradient.At(a) * effectiveBias * effectiveBias;

    /// <summary>
    /// The gradient an oscillator of amplitude A senses at mean gap a (see <see cref="AmplitudeAverage"/>),
    /// evaluated exactly, not by its A^2 expansion.
    /// </summary>
    public double AveragedGradient(double a, double effectiveBias, double amplitude)
    {
        if (amplitude == 0) return Gradient(a, effectiveBias);
        if (a - amplitude <= Low) throw new ArgumentOutOfRangeException(nameof(a), $"the swing reaches {a - amplitude:G4} m, below the table");
        return AmplitudeAverage.Gradient(x => Gradient(x, effectiveBias), a, amplitude);
    }

    /// <summary>
    /// Static mode: the deflection x toward the plate that balances the spring, k x = −F(a0 − x), with a0 the gap
    /// without deflection; solved by Newton's method to machine precision. Throws where the sphere would snap in.
    /// </summary>
    public double Deflection(double undeflectedGap, double effectiveBias, double springConstant)
    {
        double x = 0;
        for (int iteration = 0; iteration < 100; iteration++)
        {
            double gap = undeflectedGap - x;
            if (gap <= Low) throw new InvalidOperationException($"the sphere snaps onto the plate near {undeflectedGap:G4} m");
            double residual = springConstant * x + Force(gap, effectiveBias);
            double slope = springConstant - Gradient(gap, effectiveBias); // d/dx of k x + F(a0 − x)
            if (slope <= 0) throw new InvalidOperationException($"no stable deflection at {undeflectedGap:G4} m: the force gradient exceeds the spring constant");
            double step = residual / slope;
            x -= step;
            if (Math.Abs(step) <= 1e-16 * Math.Max(Math.Abs(x), 1e-18)) break;
        }
        return x;
    }
}

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
