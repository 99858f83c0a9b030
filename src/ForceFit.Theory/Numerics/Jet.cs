namespace ForceFit.Theory.Numerics;

/// <summary>
/// A value with its first three derivatives with respect to one variable (forward-mode automatic
/// differentiation truncated at third order: Leibniz and Faà di Bruno rules).
/// </summary>
/// <param name="V">Value.</param>
/// <param name="D1">First derivative.</param>
/// <param name="D2">Second derivative.</param>
/// <param name="D3">Third derivative.</param>
public readonly record struct Jet(double V, double D1, double D2, double D3)
{
    /// <summary>The variable itself at x.</summary>
    public static Jet Variable(double x) => new(x, 1, 0, 0);

    /// <summary>A constant.</summary>
    public static Jet Constant(double c) => new(c, 0, 0, 0);

    /// <summary>Sum.</summary>
    public static Jet operator +(Jet f, Jet g) => new(f.V + g.V, f.D1 + g.D1, f.D2 + g.D2, f.D3 + g.D3);

    /// <summary>Difference.</summary>
    public static Jet operator -(Jet f, Jet g) => new(f.V - g.V, f.D1 - g.D1, f.D2 - g.D2, f.D3 - g.D3);

    /// <summary>Scaling.</summary>
    public static Jet operator *(double c, Jet f) => new(c * f.V, c * f.D1, c * f.D2, c * f.D3);

    /// <summary>Product (Leibniz rule).</summary>
    public static Jet operator *(Jet f, Jet g) => new(
        f.V * g.V,
        f.D1 * g.V + f.V * g.D1,
        f.D2 * g.V + 2 * f.D1 * g.D1 + f.V * g.D2,
        f.D3 * g.V + 3 * f.D2 * g.D1 + 3 * f.D1 * g.D2 + f.V * g.D3);

    /// <summary>Reciprocal.</summary>
    public Jet Reciprocal()
    {
        double r = 1 / V, r2 = r * r;
        return new Jet(r, -D1 * r2, (2 * D1 * D1 - V * D2) * r2 * r, (-6 * D1 * D1 * D1 + 6 * V * D1 * D2 - V * V * D3) * r2 * r2);
    }

    /// <summary>Quotient.</summary>
    public static Jet operator /(Jet f, Jet g) => f * g.Reciprocal();

    /// <summary>h(f(x)) from h and its first three derivatives at f(x) (Faà di Bruno).</summary>
    public Jet Compose(double h0, double h1, double h2, double h3) => new(
        h0,
        h1 * D1,
        h2 * D1 * D1 + h1 * D2,
        h3 * D1 * D1 * D1 + 3 * h2 * D1 * D2 + h1 * D3);
}
