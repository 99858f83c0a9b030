using ForceFit.Fitting;

namespace ForceFit.Analysis.Reduction;

/// <summary>
/// A smooth description of a measured curve F(a) (force or gradient), taken from the data so that the corrections it
/// feeds follow the measurement: ln|F| = ln|T(a)| + P(ln a), with P a weighted polynomial (degree 4 with 16 or more
/// significant points, 3 with 8–15, 2 with 5–7, else the pure power law a^-3 of ideal metals, as common practice for a
/// first guess) and T an optional carrier, the settings' theories' mean. The carrier only supplies the fine structure
/// (the thermal and finite-conductivity bends a low-degree polynomial cannot follow: without it the log-slope of the
/// Drude curve at 120–1000 nm is off by up to 2e-3 with degree 4, 1e-3 with degree 6, which biased k and m of
/// noise-free deflection runs by 3e-5); the data's polynomial takes up whatever smooth difference the true curve has
/// from it, so the shape stays the data's. It supplies the local slope dF/da (to turn gap errors into errors of F),
/// F''/F (the oscillation-amplitude correction), the change of the Casimir force with the sphere's deflection, and
/// the ratio used to interpolate between separations.
/// </summary>
public sealed class CurveShape
{
    private readonly double[] _c; // ln|F| − ln|T| = Sum c_k u^k, u = ln(a / a_scale)
    private readonly double _scale;
    private readonly Func<double, (double Value, double First, double Second)>? _carrier;

    private CurveShape(double[] c, double scale, int sign, Func<double, (double Value, double First, double Second)>? carrier)
    {
        _c = c;
        _scale = scale;
        Sign = sign;
        _carrier = carrier;
    }

    /// <summary>+1 for a positive curve (a gradient of an attraction), −1 for a negative one (an attractive force).</summary>
    public int Sign { get; }

    /// <summary>
    /// Fits the shape to points with uncertainties; only points beyond three sigma from zero are used. The carrier
    /// gives T, dT/da and d^2T/da^2 at a gap; it is dropped when it is not finite and nonzero at every point used.
    /// </summary>
    public static CurveShape Fit(IReadOnlyList<double> separation, IReadOnlyList<double> value, IReadOnlyList<double> sigma,
        Func<double, (double Value, double First, double Second)>? carrier = null)
    {
        int sign = value.Sum() >= 0 ? 1 : -1;
        var u = new List<double>();
        var y = new List<double>();
        var s = new List<double>();
        var a = new List<double>();
        double scale = separation.Count > 0 ? separation.Min() : 1;
        for (int i = 0; i < value.Count; i++)
        {
            double v = sign * value[i];
            if (!(v > 3 * sigma[i]) || !(separation[i] > 0)) continue;
            u.Add(Math.Log(separation[i] / scale));
            y.Add(Math.Log(v));
            s.Add(sigma[i] / v); // sigma of ln|F|
            a.Add(separation[i]);
        }
        int degree = u.Count >= 16 ? 4 : u.Count >= 8 ? 3 : u.Count >= 5 ? 2 : -1;
        if (degree < 0 || u.Distinct().Count() <= degree) return new CurveShape([0, -3], scale, sign, null);
        if (carrier is not null)
        {
            double[] t = a.Select(x => carrier(x).Value).ToArray();
            if (t.All(x => double.IsFinite(x) && x != 0 && Math.Sign(x) == Math.Sign(t[0])))
                for (int i = 0; i < y.Count; i++) y[i] -= Math.Log(Math.Abs(t[i]));
            else carrier = null;
        }
        FitResult f = LinearLeastSquares.Polynomial(u, y, degree, s);
        return new CurveShape(f.Parameters, scale, sign, carrier);
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

    // T and its derivatives over T at a (1, 0, 0 without a carrier).
    private (double Magnitude, double First, double Second) Carrier(double a)
    {
        if (_carrier is null) return (1, 0, 0);
        var (t, t1, t2) = _carrier(a);
        return (Math.Abs(t), t1 / t, t2 / t);
    }

    /// <summary>The smooth curve's value at a.</summary>
    public double Value(double a) => Sign * Carrier(a).Magnitude * Math.Exp(Poly(a).P);

    /// <summary>dF/da / F at a: T'/T + P'(u)/a.</summary>
    public double LogSlope(double a) => Carrier(a).First + Poly(a).P1 / a;

    /// <summary>F''/F at a: T''/T + 2 (T'/T) P'/a + (P'' + P'^2 − P')/a^2 for F = T exp(P(ln a)).</summary>
    public double SecondOverValue(double a)
    {
        (_, double p1, double p2) = Poly(a);
        (_, double t1, double t2) = Carrier(a);
        return t2 + 2 * t1 * p1 / a + (p2 + p1 * p1 - p1) / (a * a);
    }
}
