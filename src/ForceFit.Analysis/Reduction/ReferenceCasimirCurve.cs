using System.Collections.Concurrent;

namespace ForceFit.Analysis.Reduction;

/// <summary>
/// The Casimir force gradient (frequency mode) or force (deflection) of the settings' theories at the reference gap,
/// felt by the reference steps (see RunReducer.CorrectedReference). Every trial z0 of every fit asks for it again at
/// a slightly different gap, so the theories' mean is tabulated on demand on a grid uniform in ln a and read by cubic
/// (four-point Lagrange) interpolation: with step h = 1/256 in ln a the interpolation error of a power law a^-n is
/// about n^4 h^4 / 43 (the Lagrange remainder, 9/16 · f''''/24 at mid-interval), 1.4e-9 relative for n = 4 — far below
/// the 20% (or theory spread) this small correction is given as its uncertainty.
/// </summary>
public sealed class ReferenceCasimirCurve
{
    private const double Step = 1.0 / 256;
    private readonly Func<double, double[]> perTheory;
    private readonly ConcurrentDictionary<long, double> nodes = new();

    /// <param name="perTheory">Each theory's value at a gap (m), computed exactly.</param>
    public ReferenceCasimirCurve(Func<double, double[]> perTheory) => this.perTheory = perTheory;

    /// <summary>Each theory's value at the gap, computed exactly.</summary>
    public double[] PerTheory(double gap) => perTheory(gap);

    /// <summary>The theories' mean at the gap, interpolated from the tabulated nodes (NaN for a gap that is not positive).</summary>
    public double Mean(double gap) => MeanWithDerivatives(gap).Value;

    /// <summary>
    /// The theories' mean and its first and second derivatives in the gap (per m, per m^2), all from the same four-point
    /// Lagrange cubic in x = ln(a)/h (d/da = (d/dx)/(a h), d^2/da^2 = (d^2/dx^2 / h^2 − d/dx / h)/a^2); the derivatives'
    /// errors are O(h^3) and O(h^2) relative, 1e-7 and 1e-4 for h = 1/256. NaN for a gap that is not positive.
    /// </summary>
    public (double Value, double First, double Second) MeanWithDerivatives(double gap)
    {
        if (!(gap > 0) || !double.IsFinite(gap)) return (double.NaN, double.NaN, double.NaN);
        double x = Math.Log(gap) / Step;
        long i = (long)Math.Floor(x);
        double t = x - i;
        // Nodes i−1, i, i+1, i+2 with t in [0, 1) between i and i+1 (Lagrange basis on −1, 0, 1, 2).
        double fm = Node(i - 1), f0 = Node(i), f1 = Node(i + 1), f2 = Node(i + 2);
        double value = -t * (t - 1) * (t - 2) / 6 * fm + (t + 1) * (t - 1) * (t - 2) / 2 * f0
            - (t + 1) * t * (t - 2) / 2 * f1 + (t + 1) * t * (t - 1) / 6 * f2;
        double dx = -(3 * t * t - 6 * t + 2) / 6 * fm + (3 * t * t - 4 * t - 1) / 2 * f0
            - (3 * t * t - 2 * t - 2) / 2 * f1 + (3 * t * t - 1) / 6 * f2;
        double dxx = -(t - 1) * fm + (3 * t - 2) * f0 - (3 * t - 1) * f1 + t * f2;
        return (value, dx / (gap * Step), (dxx / (Step * Step) - dx / Step) / (gap * gap));
    }

    // Nodes for gaps from 0.1 nm to 1 m sit in a flat array (NaN until first asked for; two threads asking at once both
    // compute the same value), the rare others in the dictionary: the fits ask millions of times per run.
    private double Node(long index)
    {
        long slot = index - FirstFlatNode;
        if (slot < 0 || slot >= flat.Length) return nodes.GetOrAdd(index, Compute);
        double value = Volatile.Read(ref flat[slot]);
        if (double.IsNaN(value))
        {
            value = Compute(index);
            Volatile.Write(ref flat[slot], value);
        }
        return value;
    }

    private double Compute(long index) => perTheory(Math.Exp(index * Step)).Average();

    private const long FirstFlatNode = -5895; // floor(ln(1e-10) / Step)
    private readonly double[] flat = Enumerable.Repeat(double.NaN, 5896).ToArray();
}
