using ForceFit.Theory.Electrostatics;
using ForceFit.Theory.Geometry;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Numerics;

namespace ForceFit.Simulation;

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
