using System.Collections.Concurrent;
using ForceFit.Theory.Numerics;

namespace ForceFit.Theory.Electrostatics;

/// <summary>
/// The exact sphere–plate electrostatic force and gradient per volt squared (<see cref="SpherePlateElectrostatics"/>),
/// tabulated once on 3000 log-spaced gaps from 2 nm to 60 um and read by cubic Hermite interpolation (relative error
/// below 1e-11), so that fits can evaluate them millions of times. Outside the table: NaN.
/// Radii within 5% reuse a tabulated one: the capacitance is C = eps0 R g(a/R) (Laplace's equation has no length scale),
/// so F(a; R) = F(a R0/R; R0), F'(a; R) = (R0/R) F'(a R0/R; R0) and F''(a; R) = (R0/R)^2 F''(a R0/R; R0).
/// </summary>
public sealed class ElectrostaticTable
{
    private const double Low = 2e-9, High = 60e-6;
    private static readonly ConcurrentDictionary<double, ElectrostaticTable> Cache = new();
    private readonly Tables _tables;
    private readonly double _scale; // R0 / R
    private readonly ConcurrentDictionary<double, HermiteTable> _averaged = new();

    // The tabulated force, gradient and second derivative for radius R0.
    private sealed class Tables
    {
        public readonly double Radius;
        public readonly HermiteTable Force, Gradient, Curvature;

        public Tables(double radius)
        {
            Radius = radius;
            // One evaluation of the series per gap gives all three tables (force, gradient, second derivative).
            HermiteTable[] tables = HermiteTable.Several(Low, High, 3000, 3, a =>
            {
                var e = SpherePlateElectrostatics.At(a, radius);
                return [(e.Force, e.Gradient), (e.Gradient, e.SecondDerivative), (e.SecondDerivative, e.ThirdDerivative)];
            });
            (Force, Gradient, Curvature) = (tables[0], tables[1], tables[2]);
        }
    }

    private ElectrostaticTable(double radius, Tables tables)
    {
        Radius = radius;
        _tables = tables;
        _scale = tables.Radius / radius;
    }

    /// <summary>The sphere radius (m).</summary>
    public double Radius { get; }

    /// <summary>
    /// The table for a radius: a scaled view of a tabulated radius within 5% (its systematic variations), so that the
    /// gap range stays nearly the full 2 nm – 60 um; otherwise a new tabulation.
    /// </summary>
    public static ElectrostaticTable For(double radius) => Cache.GetOrAdd(radius, r => new ElectrostaticTable(r, BaseFor(r)));

    private static readonly object BaseLock = new();
    private static readonly List<Tables> Bases = [];

    private static Tables BaseFor(double radius)
    {
        lock (BaseLock)
        {
            Tables? near = Bases.FirstOrDefault(b => Math.Abs(b.Radius / radius - 1) <= 0.05);
            if (near is not null) return near;
            var made = new Tables(radius);
            Bases.Add(made);
            return made;
        }
    }

    // The base table's gap for gap a at this radius, or NaN outside the tabulated range (within the range of both).
    private double Scaled(double gap)
    {
        double g = gap * _scale;
        return gap >= Low && gap <= High && g >= Low && g <= High ? g : double.NaN;
    }

    /// <summary>F / (V − V0)^2 in N/V^2 (negative), NaN outside the table.</summary>
    public double Force(double gap)
    {
        double g = Scaled(gap);
        return double.IsNaN(g) ? double.NaN : _tables.Force.At(g);
    }

    /// <summary>
    /// The gradient an oscillator of amplitude A senses, &lt;F'&gt; per V^2 (<see cref="Geometry.AmplitudeAverage"/>, exact for any
    /// A), tabulated once per amplitude from 2 nm + 2A upward; NaN outside.
    /// </summary>
    public double AveragedGradient(double gap, double amplitude)
    {
        if (amplitude == 0) return Gradient(gap);
        HermiteTable t = _averaged.GetOrAdd(amplitude, amp => new HermiteTable(Low + 2 * amp, High - 2 * amp, 3000, a =>
            (Geometry.AmplitudeAverage.Gradient(Gradient, a, amp), Geometry.AmplitudeAverage.Gradient(Curvature, a, amp))));
        return gap >= t.Low && gap <= t.High ? t.At(gap) : double.NaN;
    }

    /// <summary>F' / (V − V0)^2 in N/(m V^2) (positive), NaN outside the table.</summary>
    public double Gradient(double gap)
    {
        double g = Scaled(gap);
        return double.IsNaN(g) ? double.NaN : _scale * _tables.Gradient.At(g);
    }

    private double Curvature(double gap)
    {
        double g = Scaled(gap);
        return double.IsNaN(g) ? double.NaN : _scale * _scale * _tables.Curvature.At(g);
    }
}
