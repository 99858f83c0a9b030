using MathNet.Numerics.LinearAlgebra;

namespace ForceFit.Theory.Numerics;

/// <summary>Nodes and weights of a quadrature rule.</summary>
/// <param name="Nodes">Abscissas.</param>
/// <param name="Weights">Weights.</param>
public sealed record QuadratureRule(double[] Nodes, double[] Weights);

/// <summary>Gaussian quadrature rules by the Golub–Welsch algorithm (G. H. Golub, J. H. Welsch, Math. Comp. 23, 221 (1969)).</summary>
public static class GaussRules
{
    private static readonly Dictionary<(char, int), QuadratureRule> Cache = [];
    private static readonly Lock CacheLock = new();

    /// <summary>
    /// Gauss–Laguerre rule for Integral_0^inf f(t) dt with the weight e^-t folded into the weights:
    /// the returned weights are w_j e^{t_j}, so that Sum W_j f(t_j) approximates the plain integral of f.
    /// </summary>
    public static QuadratureRule LaguerreUnweighted(int n) => Get('L', n, () =>
    {
        // Jacobi matrix of the Laguerre polynomials: diagonal 2i+1, off-diagonal i (Abramowitz & Stegun 22.7.12).
        var (nodes, weights) = GolubWelsch(n, i => 2 * i + 1, i => i, mu0: 1.0);
        // Fold e^t into the weights in logarithms; nodes beyond t = 700 carry e^-t below 1e-304 and are dropped.
        int kept = nodes.Count(t => t <= 700);
        var folded = new double[kept];
        for (int j = 0; j < kept; j++) folded[j] = weights[j] > 0 ? Math.Exp(Math.Log(weights[j]) + nodes[j]) : 0.0;
        return new QuadratureRule(nodes[..kept], folded);
    });

    /// <summary>Gauss–Legendre rule on [0, 1].</summary>
    public static QuadratureRule LegendreUnit(int n) => Get('P', n, () =>
    {
        // Jacobi matrix of the Legendre polynomials: diagonal 0, off-diagonal i / sqrt(4 i^2 - 1) (A&S 22.7.10).
        var (nodes, weights) = GolubWelsch(n, _ => 0.0, i => i / Math.Sqrt(4.0 * i * i - 1.0), mu0: 2.0);
        for (int j = 0; j < n; j++)
        {
            nodes[j] = 0.5 * (nodes[j] + 1.0);
            weights[j] *= 0.5;
        }
        return new QuadratureRule(nodes, weights);
    });

    private static QuadratureRule Get(char kind, int n, Func<QuadratureRule> make)
    {
        lock (CacheLock)
        {
            if (!Cache.TryGetValue((kind, n), out QuadratureRule? rule))
            {
                rule = make();
                Cache[(kind, n)] = rule;
            }
            return rule;
        }
    }

    private static (double[] Nodes, double[] Weights) GolubWelsch(int n, Func<int, double> diagonal, Func<int, double> offDiagonal, double mu0)
    {
        Matrix<double> j = Matrix<double>.Build.Dense(n, n);
        for (int i = 0; i < n; i++)
        {
            j[i, i] = diagonal(i);
            if (i + 1 < n)
            {
                j[i, i + 1] = offDiagonal(i + 1);
                j[i + 1, i] = offDiagonal(i + 1);
            }
        }
        var evd = j.Evd(Symmetricity.Symmetric);
        var order = Enumerable.Range(0, n).OrderBy(i => evd.EigenValues[i].Real).ToArray();
        double[] nodes = order.Select(i => evd.EigenValues[i].Real).ToArray();
        double[] weights = order.Select(i => mu0 * evd.EigenVectors[0, i] * evd.EigenVectors[0, i]).ToArray();
        return (nodes, weights);
    }
}

/// <summary>
/// Double-exponential (exp-sinh) quadrature on [0, inf) for integrands with endpoint singularities
/// (H. Takahasi, M. Mori, Publ. RIMS 9, 721 (1974)): t = exp((pi/2) sinh u).
/// </summary>
public static class ExpSinh
{
    /// <summary>Integrates f over [0, inf) to a relative tolerance; returns the value and an error estimate.</summary>
    public static (double Value, double Error, int Evaluations) Integrate(Func<double, double> f, double relativeTolerance = 1e-12)
    {
        double h = 0.5;
        double sum = Evaluate(f, h, 0, 1, out int evaluations);
        double previous = sum * h;
        for (int level = 1; level <= 8; level++)
        {
            h /= 2;
            sum += Evaluate(f, h, 1, 2, out int added);
            evaluations += added;
            double current = sum * h;
            double error = Math.Abs(current - previous);
            if (error <= relativeTolerance * Math.Abs(current) && level >= 3) return (current, error, evaluations);
            previous = current;
        }
        return (previous, Math.Abs(previous) * relativeTolerance * 10, evaluations);
    }

    // Sum of f(t(u)) t'(u) over u = k h (all k, or odd k only when refining); stops where the
    // double-exponential decay has made the terms negligible (t below 1e-200 or above 1e3: the integrands
    // here decay at least like e^-t).
    private static double Evaluate(Func<double, double> f, double h, int start, int step, out int evaluations)
    {
        double sum = 0;
        evaluations = 0;
        if (start == 0)
        {
            sum += f(1.0) * 0.5 * Math.PI;
            evaluations++;
            start = step;
        }
        foreach (int direction in (ReadOnlySpan<int>)[1, -1])
        {
            for (int k = start; k * h <= 6.5; k += step)
            {
                double u = direction * k * h;
                double t = Math.Exp(0.5 * Math.PI * Math.Sinh(u));
                if (t < 1e-200 || t > 1e3) break;
                sum += f(t) * 0.5 * Math.PI * Math.Cosh(u) * t;
                evaluations++;
            }
        }
        return sum;
    }
}

/// <summary>
/// A fixed exp-sinh rule on [0, inf), t = exp((pi/2) sinh(k h)) for integrands decaying like e^-t with at most
/// logarithmic endpoint singularities; <see cref="InHalfRule"/> marks the nodes of the rule with step 2h, which
/// gives an error estimate for free.
/// </summary>
/// <param name="Nodes">Abscissas.</param>
/// <param name="Weights">Weights of the step-h rule.</param>
/// <param name="InHalfRule">True for the nodes that also belong to the step-2h rule.</param>
public sealed record ExpSinhRule(double[] Nodes, double[] Weights, bool[] InHalfRule)
{
    /// <summary>Step 1/16 between t = 1e-200 and t = 1e3 (Takahasi and Mori 1974).</summary>
    public static ExpSinhRule Default { get; } = Create(1.0 / 16);

    /// <summary>Builds the rule with step h.</summary>
    public static ExpSinhRule Create(double h)
    {
        var nodes = new List<double>();
        var weights = new List<double>();
        var half = new List<bool>();
        for (int k = -(int)(6.5 / h); k * h <= 6.5; k++)
        {
            double u = k * h;
            double t = Math.Exp(0.5 * Math.PI * Math.Sinh(u));
            if (t < 1e-200 || t > 1e3) continue;
            nodes.Add(t);
            weights.Add(h * 0.5 * Math.PI * Math.Cosh(u) * t);
            half.Add(k % 2 == 0);
        }
        return new ExpSinhRule(nodes.ToArray(), weights.ToArray(), half.ToArray());
    }
}

/// <summary>Special functions used by the theory.</summary>
public static class SpecialFunctions
{
    /// <summary>Apery's constant zeta(3) = 1.2020569031595942854... (OEIS A002117).</summary>
    public const double Zeta3 = 1.2020569031595942854;

    /// <summary>The trilogarithm Li_3(x) = Sum x^n / n^3 for 0 &lt;= x &lt;= 1 (Li_3(1) = zeta(3)).</summary>
    public static double Trilogarithm(double x)
    {
        if (x < 0 || x > 1) throw new ArgumentOutOfRangeException(nameof(x), "0 <= x <= 1 is supported");
        if (x == 1) return Zeta3;
        double sum = 0, power = 1;
        for (int n = 1; n < 100000; n++)
        {
            power *= x;
            double term = power / ((double)n * n * n);
            sum += term;
            if (term < 1e-18 * sum) break;
        }
        return sum;
    }
}
