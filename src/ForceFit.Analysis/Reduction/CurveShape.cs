using ForceFit.Fitting;

namespace ForceFit.Analysis.Reduction;

/// <summary>
/// A smooth description of a measured curve F(a) (force or gradient), taken from the data themselves so that
/// corrections stay independent of any theory: ln|F| as a weighted polynomial in ln a (degree 3 with at least 8
/// significant points (4 with 16 or more), 2 with 5–7, else a pure power law a^-3, the ideal-metal force law, as
/// common practice for a first guess). It supplies the local slope dF/da (to turn gap errors into errors of F), F''/F (the
/// oscillation-amplitude correction) and the ratio used to interpolate between separations.
/// </summary>
public sealed class CurveShape
{
    private readonly double[] _c; // ln|F| = Sum c_k u^k, u = ln(a / a_scale)
    private readonly double _scale;

    private CurveShape(double[] c, double scale, int sign)
    {
        _c = c;
        _scale = scale;
        Sign = sign;
    }

    /// <summary>+1 for a positive curve (a gradient of an attraction), −1 for a negative one (an attractive force).</summary>
    public int Sign { get; }

    /// <summary>Fits the shape to points with uncertainties; only points beyond three sigma from zero are used.</summary>
    public static CurveShape Fit(IReadOnlyList<double> separation, IReadOnlyList<double> value, IReadOnlyList<double> sigma)
    {
        int sign = value.Sum() >= 0 ? 1 : -1;
        var u = new List<double>();
        var y = new List<double>();
        var s = new List<double>();
        double scale = separation.Count > 0 ? separation.Min() : 1;
        for (int i = 0; i < value.Count; i++)
        {
            double v = sign * value[i];
            if (!(v > 3 * sigma[i]) || !(separation[i] > 0)) continue;
            u.Add(Math.Log(separation[i] / scale));
            y.Add(Math.Log(v));
            s.Add(sigma[i] / v); // sigma of ln|F|
        }
        int degree = u.Count >= 16 ? 4 : u.Count >= 8 ? 3 : u.Count >= 5 ? 2 : -1;
        if (degree < 0 || u.Distinct().Count() <= degree) return new CurveShape([0, -3], scale, sign);
        FitResult f = LinearLeastSquares.Polynomial(u, y, degree, s);
        return new CurveShape(f.Parameters, scale, sign);
    }

    private (double P, double P1, double P2) Poly(double a)
    {
        double u = Math.Log(a / _scale), p = 0, p1 = 0, p2 = 0;
        for (int k = _c.Length - 1; k >= 0; k--)
        {
            p2 = p2 * u + 2 * p1;
            p1 = p1 * u + p;
            p = p * u + _c[k];
        }
        return (p, p1, p2);
    }

    /// <summary>The smooth curve's value at a.</summary>
    public double Value(double a) => Sign * Math.Exp(Poly(a).P);

    /// <summary>dF/da / F at a: P'(u) / a.</summary>
    public double LogSlope(double a) => Poly(a).P1 / a;

    /// <summary>F''/F at a: (P'' + P'^2 − P') / a^2 for F = exp(P(ln a)).</summary>
    public double SecondOverValue(double a)
    {
        (_, double p1, double p2) = Poly(a);
        return (p2 + p1 * p1 - p1) / (a * a);
    }
}
