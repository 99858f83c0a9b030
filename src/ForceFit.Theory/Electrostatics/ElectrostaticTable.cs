using System.Collections.Concurrent;
using ForceFit.Theory.Numerics;

namespace ForceFit.Theory.Electrostatics;

/// <summary>
/// The exact sphere–plate electrostatic force and gradient per volt squared (<see cref="SpherePlateElectrostatics"/>),
/// tabulated once per radius on 3000 log-spaced gaps from 2 nm to 60 um and read by cubic Hermite interpolation
/// (relative error below 1e-11), so that fits can evaluate them millions of times. Outside the table: NaN.
/// </summary>
public sealed class ElectrostaticTable
{
    private const double Low = 2e-9, High = 60e-6;
    private static readonly ConcurrentDictionary<double, ElectrostaticTable> Cache = new();
    private readonly HermiteTable _force, _gradient, _curvature;
    private readonly ConcurrentDictionary<double, HermiteTable> _averaged = new();

    private ElectrostaticTable(double radius)
    {
        Radius = radius;
        // One evaluation of the series per gap gives all three tables (force, gradient, second derivative).
        HermiteTable[] tables = HermiteTable.Several(Low, High, 3000, 3, a =>
        {
            var e = SpherePlateElectrostatics.At(a, radius);
            return [(e.Force, e.Gradient), (e.Gradient, e.SecondDerivative), (e.SecondDerivative, e.ThirdDerivative)];
        });
        (_force, _gradient, _curvature) = (tables[0], tables[1], tables[2]);
    }

    /// <summary>The sphere radius (m).</summary>
    public double Radius { get; }

    /// <summary>The table for a radius (built on first use, then shared).</summary>
    public static ElectrostaticTable For(double radius) => Cache.GetOrAdd(radius, r => new ElectrostaticTable(r));

    /// <summary>F / (V − V0)^2 in N/V^2 (negative), NaN outside the table.</summary>
    public double Force(double gap) => gap >= Low && gap <= High ? _force.At(gap) : double.NaN;

    /// <summary>
    /// The gradient an oscillator of amplitude A senses, &lt;F'&gt; per V^2 (<see cref="Geometry.AmplitudeAverage"/>, exact for any
    /// A), tabulated once per amplitude from 2 nm + 2A upward; NaN outside.
    /// </summary>
    public double AveragedGradient(double gap, double amplitude)
    {
        if (amplitude == 0) return Gradient(gap);
        HermiteTable t = _averaged.GetOrAdd(amplitude, amp => new HermiteTable(Low + 2 * amp, High - 2 * amp, 3000, a =>
            (Geometry.AmplitudeAverage.Gradient(_gradient.At, a, amp), Geometry.AmplitudeAverage.Gradient(_curvature.At, a, amp))));
        return gap >= t.Low && gap <= t.High ? t.At(gap) : double.NaN;
    }

    /// <summary>F' / (V − V0)^2 in N/(m V^2) (positive), NaN outside the table.</summary>
    public double Gradient(double gap) => gap >= Low && gap <= High ? _gradient.At(gap) : double.NaN;
}
