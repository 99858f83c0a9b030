using ForceFit.Core.Constants;
using ForceFit.Theory.Numerics;
using ForceFit.Theory.Permittivity;

namespace ForceFit.Theory.Lifshitz;

/// <summary>
/// Lifshitz free energy per area, pressure and the pressure's first two derivatives between two half-spaces,
/// each with an error estimate (the quadrature and Matsubara-tail errors added).
/// </summary>
/// <param name="FreeEnergy">E(a, T) in J/m^2.</param>
/// <param name="Pressure">P = −dE/da in Pa (negative = attraction).</param>
/// <param name="PressureDerivative">dP/da in Pa/m.</param>
/// <param name="PressureSecondDerivative">d²P/da² in Pa/m².</param>
/// <param name="FreeEnergyError">Estimated absolute error of E.</param>
/// <param name="PressureError">Estimated absolute error of P.</param>
/// <param name="PressureDerivativeError">Estimated absolute error of dP/da.</param>
/// <param name="PressureSecondDerivativeError">Estimated absolute error of d²P/da².</param>
/// <param name="MatsubaraTerms">Number of Matsubara terms summed (0 at T = 0).</param>
/// <param name="Evaluations">Number of integrand evaluations (reflection-coefficient sets).</param>
public sealed record LifshitzResult(
    double FreeEnergy,
    double Pressure,
    double PressureDerivative,
    double PressureSecondDerivative,
    double FreeEnergyError,
    double PressureError,
    double PressureDerivativeError,
    double PressureSecondDerivativeError,
    int MatsubaraTerms,
    int Evaluations);

/// <summary>Accuracy settings; the defaults reach 1e-6 relative over 20 nm – 10 um and 0 – 600 K.</summary>
/// <param name="RelativeTolerance">Matsubara terms are summed until the rest is below this fraction of the sum.</param>
/// <param name="LaguerreNodes">Nodes of the wave-vector rule for each Matsubara term.</param>
public sealed record LifshitzOptions(double RelativeTolerance = 1e-9, int LaguerreNodes = 40);

/// <summary>
/// Lifshitz theory between two half-spaces (physics.md, Lifshitz theory; E. M. Lifshitz, Sov. Phys. JETP 2, 73
/// (1956); notation of Bordag, Klimchitskaya, Mohideen, Mostepanenko, Advances in the Casimir Effect (2009)).
/// With y = 2 q a and y_l = 2 a xi_l / c:
/// E = (k_B T / 8 pi a^2) Sum'_l Integral_{y_l}^inf y dy Sum_p ln(1 − R_p e^−y),
/// P = −(k_B T / 8 pi a^3) Sum'_l Integral y^2 h_p, h = R e^−y / (1 − R e^−y); T = 0 replaces
/// k_B T Sum'_l by (hbar c / 4 pi a) Integral_0^inf d(y_l).
/// The permittivities at the Matsubara frequencies are computed once and reused for every separation.
/// </summary>
public sealed class LifshitzCalculator
{
    private static readonly double C = Codata2018.SpeedOfLight.Value;
    private static readonly double Hbar = Codata2018.ReducedPlanck.Value;
    private static readonly double KB = Codata2018.Boltzmann.Value;

    private readonly IPermittivity _plate;
    private readonly IPermittivity _sphere;
    private readonly double _temperature;
    private readonly LifshitzOptions _options;
    private readonly double _xi1;
    private readonly bool _sameMaterial;
    private readonly QuadratureRule[] _rules;
    private readonly QuadratureRule[] _checkRules;
    private readonly Lock _growLock = new();
    private double[] _eps1 = [double.NaN];
    private double[] _eps2 = [double.NaN];

    /// <summary>Prepares the calculation for two materials at a temperature (K, 0 allowed).</summary>
    public LifshitzCalculator(IPermittivity plate, IPermittivity sphere, double temperature, LifshitzOptions? options = null)
    {
        if (!(temperature >= 0)) throw new ArgumentOutOfRangeException(nameof(temperature), "temperature must be 0 K or above");
        _plate = plate;
        _sphere = sphere;
        _temperature = temperature;
        _options = options ?? new LifshitzOptions();
        _xi1 = 2 * Math.PI * KB * temperature / Hbar; // first Matsubara frequency (physics.md)
        _sameMaterial = Equals(plate, sphere);
        int[] nodes = TierNodes(_options.LaguerreNodes);
        _rules = nodes.Select(GaussRules.LaguerreUnweighted).ToArray();
        _checkRules = nodes.Select(n => GaussRules.LaguerreUnweighted(n * 3 / 2)).ToArray();
    }

    /// <summary>The temperature in K.</summary>
    public double Temperature => _temperature;

    /// <summary>E, P, dP/da and d²P/da² at separation a (m).</summary>
    public LifshitzResult At(double separation)
    {
        if (!(separation > 0)) throw new ArgumentOutOfRangeException(nameof(separation), "separation must be positive");
        return _temperature > 0 ? AtFiniteTemperature(separation) : AtZeroTemperature(separation);
    }

    // ---- T > 0: Matsubara sum ------------------------------------------------------------------------

    private LifshitzResult AtFiniteTemperature(double a)
    {
        double y1 = 2 * a * _xi1 / C;
        Sums zero = ZeroFrequencyTerm(a, out int evaluations, out Sums zeroError);
        var total = zero.Scale(0.5);
        var error = zeroError.Scale(0.5);
        // Each node count ("tier") gets its own quadrature check, on the first (hardest) term that uses it, against
        // a rule with 50% more nodes; that relative error is applied to the sum of |terms| of the tier.
        Span<Sums> tierError = stackalloc Sums[TierCount];
        Span<Sums> tierMagnitude = stackalloc Sums[TierCount];
        Span<bool> tierChecked = stackalloc bool[TierCount];
        Sums previous = default;
        int l = 1;
        for (; ; l++)
        {
            (double eps1, double eps2) = Permittivities(l);
            double yl = l * y1;
            int tier = Tier(yl);
            QuadratureRule rule = _rules[tier];
            Sums term = MatsubaraTerm(yl, eps1, eps2, _sameMaterial, rule);
            evaluations += rule.Nodes.Length;
            if (!tierChecked[tier])
            {
                QuadratureRule finer = _checkRules[tier];
                Sums check = MatsubaraTerm(yl, eps1, eps2, _sameMaterial, finer);
                evaluations += finer.Nodes.Length;
                tierChecked[tier] = true;
                tierError[tier] = check.Minus(term).Abs().DivideBy(term.Abs());
                error = error.Plus(check.Minus(term).Abs());
                term = check; // the better value; its own error is covered by the difference just added
            }
            else
            {
                tierMagnitude[tier] = tierMagnitude[tier].Plus(term.Abs());
            }
            total = total.Plus(term);
            if (l >= 2 && term.Abs().AllBelow(previous.Abs()))
            {
                // Geometric tail: the terms fall off like e^{-y_l} times a power of l; stop once the estimated
                // rest of the sum is below the tolerance.
                Sums tail = term.Abs().Times(term.Abs().DivideBy(previous.Abs()).TailFactor());
                if (tail.AllBelow(total.Abs().Scale(_options.RelativeTolerance)))
                {
                    error = error.Plus(tail);
                    break;
                }
            }
            previous = term;
            if (l > 5_000_000) throw new InvalidOperationException("Matsubara sum did not converge");
        }
        for (int t = 0; t < TierCount; t++) error = error.Plus(tierMagnitude[t].Times(tierError[t]));
        double prefactor = KB * _temperature / (8 * Math.PI);
        return Finish(a, total.Scale(prefactor), error.Scale(prefactor), l, evaluations);
    }

    private const int TierCount = 5;

    // For small y_l the integrand has a near-singularity (1 − R e^-y close to 0) just left of t = 0: the lowest
    // terms get more nodes. Tiers: y_l >= 4, 2–4, 0.5–2, 0.1–0.5, below 0.1.
    private static int Tier(double yl) => yl >= 4 ? 0 : yl >= 2 ? 1 : yl >= 0.5 ? 2 : yl >= 0.1 ? 3 : 4;

    private static int[] TierNodes(int n) => [n / 2, n * 3 / 4, n, n * 5 / 3, n * 5 / 2];

    private (double, double) Permittivities(int l)
    {
        double[] eps1 = Volatile.Read(ref _eps1), eps2 = Volatile.Read(ref _eps2);
        if (l < eps1.Length) return (eps1[l], eps2[l]);
        lock (_growLock)
        {
            if (l >= _eps1.Length)
            {
                int size = Math.Max(l + 1, 2 * _eps1.Length);
                var grown1 = new double[size];
                var grown2 = new double[size];
                Array.Copy(_eps1, grown1, _eps1.Length);
                Array.Copy(_eps2, grown2, _eps2.Length);
                for (int k = _eps1.Length; k < size; k++)
                {
                    grown1[k] = _plate.At(k * _xi1);
                    grown2[k] = _sphere.At(k * _xi1);
                }
                Volatile.Write(ref _eps2, grown2);
                Volatile.Write(ref _eps1, grown1);
            }
            return (_eps1[l], _eps2[l]);
        }
    }

    /// <summary>One Matsubara term: the four wave-vector integrals over y from y_l, by Gauss–Laguerre in t = y − y_l.</summary>
    // Fully optimised from the first call: a short command-line run would otherwise spend its time in unoptimised code.
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    private static Sums MatsubaraTerm(double yl, double eps1, double eps2, bool same, QuadratureRule rule)
    {
        double expYl = Math.Exp(-yl);
        double d1 = (eps1 - 1) * yl * yl, d2 = (eps2 - 1) * yl * yl;
        double yl2 = yl * yl;
        double e = 0, p = 0, p1 = 0, p2 = 0;
        double[] nodes = rule.Nodes, weights = rule.Weights;
        for (int j = 0; j < nodes.Length; j++)
        {
            double t = nodes[j];
            double y = yl + t;
            double x = expYl * Math.Exp(-t);
            if (x == 0) break;
            double y2 = y * y;
            (double tm1, double te1) = Reflection(eps1, d1, y, y2, yl2);
            (double tm2, double te2) = same ? (tm1, te1) : Reflection(eps2, d2, y, y2, yl2);
            Accumulate(weights[j], y, tm1 * tm2 * x, te1 * te2 * x, ref e, ref p, ref p1, ref p2);
        }
        return new Sums(e, p, p1, p2);
    }

    private static double Square(double v) => v * v;

    /// <summary>
    /// r_TM = (eps y − K)/(eps y + K) and r_TE = (y − K)/(y + K) in y units (physics.md), K^2 = y^2 + d,
    /// d = (eps − 1) y_l^2, in cancellation-free forms: (eps − 1)((eps + 1) y^2 − y_l^2)/(eps y + K)^2 and −d/(y + K)^2.
    /// </summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveInlining)]
    private static (double Tm, double Te) Reflection(double eps, double d, double y, double y2, double yl2)
    {
        double k = Math.Sqrt(y2 + d);
        return ((eps - 1) * ((eps + 1) * y2 - yl2) / Square(eps * y + k), -d / Square(y + k));
    }

    /// <summary>Adds one node's contributions for both polarisations: u = R e^−y.</summary>
    private static void Accumulate(double w, double y, double uTm, double uTe, ref double e, ref double p, ref double p1, ref double p2)
    {
        double y2 = y * y;
        double oneTm = 1 - uTm, oneTe = 1 - uTe;
        e += w * y * Math.Log(oneTm * oneTe); // ln(1 − u_TM) + ln(1 − u_TE) with one logarithm
        double invTm = 1 / oneTm, invTe = 1 / oneTe;
        double hTm = uTm * invTm, hTe = uTe * invTe;
        p += w * y2 * (hTm + hTe);
        double gTm = hTm * invTm, gTe = hTe * invTe;
        p1 += w * y2 * y * (gTm + gTe);
        p2 += w * y2 * y2 * (gTm * (1 + uTm) * invTm + gTe * (1 + uTe) * invTe);
    }

    /// <summary>
    /// The l = 0 term as limits: TM with R = r1(0) r2(0) constant (1 for conductors), integrals in closed form
    /// through Li_3; TE with r(0) = (y − sqrt(y^2 + Omega^2)) / (y + sqrt(y^2 + Omega^2)), Omega = 2 a wp / c,
    /// for plasma-like models and 0 otherwise (physics.md).
    /// </summary>
    private Sums ZeroFrequencyTerm(double a, out int evaluations, out Sums error)
    {
        double r1 = _plate.IsConductor ? 1.0 : (_plate.Static - 1) / (_plate.Static + 1);
        double r2 = _sphere.IsConductor ? 1.0 : (_sphere.Static - 1) / (_sphere.Static + 1);
        double li3 = SpecialFunctions.Trilogarithm(r1 * r2);
        // Integral_0^inf y ln(1 − R e^−y) dy = −Li3(R); Integral y^2 h = 2 Li3; y^3 h/(1−u) = 6 Li3; y^4 ... = 24 Li3.
        var tm = new Sums(-li3, 2 * li3, 6 * li3, 24 * li3);
        evaluations = 0;
        error = default;
        double o1 = 2 * a * Math.Sqrt(_plate.ZeroFrequencyPlasmaSquared) / C;
        double o2 = 2 * a * Math.Sqrt(_sphere.ZeroFrequencyPlasmaSquared) / C;
        if (o1 == 0 || o2 == 0) return tm;
        // u = R e^-y with R = r1 r2, r_i = Omega_i^2 / (y + K_i)^2; 1 − u computed without cancellation near y = 0:
        // 1 − r_i = 2 y / (y + K_i), and 1 − u = (1 − R) + R (1 − e^-y).
        (double U, double OneMinusU) Terms(double y)
        {
            double k1 = Math.Sqrt(y * y + o1 * o1), k2 = Math.Sqrt(y * y + o2 * o2);
            double alpha = 2 * y / (y + k1), beta = 2 * y / (y + k2);
            double r = (1 - alpha) * (1 - beta);
            double oneMinusR = alpha + beta - alpha * beta;
            return (r * Math.Exp(-y), oneMinusR - r * double.ExpM1(-y));
        }
        // One pass over a fixed exp-sinh rule for all four integrals; its every-second-node subrule gives the error.
        ExpSinhRule rule = ExpSinhRule.Default;
        double e = 0, p = 0, p1 = 0, p2 = 0, eh = 0, ph = 0, p1h = 0, p2h = 0;
        for (int j = 0; j < rule.Nodes.Length; j++)
        {
            double y = rule.Nodes[j], w = rule.Weights[j];
            (double u, double v) = Terms(y);
            double q = y / v; // finite as y → 0, where v ~ y
            double te = y * Math.Log(v), tp = y * q * u, tp1 = tp * q, tp2 = tp1 * q * (1 + u);
            e += w * te; p += w * tp; p1 += w * tp1; p2 += w * tp2;
            if (rule.InHalfRule[j])
            {
                eh += 2 * w * te; ph += 2 * w * tp; p1h += 2 * w * tp1; p2h += 2 * w * tp2;
            }
        }
        evaluations = rule.Nodes.Length;
        error = new Sums(Math.Abs(e - eh), Math.Abs(p - ph), Math.Abs(p1 - p1h), Math.Abs(p2 - p2h));
        return tm.Plus(new Sums(e, p, p1, p2));
    }

    // ---- T = 0: frequency integral -------------------------------------------------------------------

    private LifshitzResult AtZeroTemperature(double a)
    {
        (Sums coarse, int n1) = ZeroTemperatureIntegral(a, 24);
        (Sums fine, int n2) = ZeroTemperatureIntegral(a, 40);
        Sums error = fine.Minus(coarse).Abs();
        // Integral_0^inf d(y_l) Integral_{y_l}^inf dy G = Integral_0^inf dy y Integral_0^1 ds G(y, s y);
        // prefactor hbar c / (32 pi^2 a), with the 1/a^n of each quantity applied in Finish.
        double prefactor = Hbar * C / (32 * Math.PI * Math.PI * a);
        return Finish(a, fine.Scale(prefactor), error.Scale(prefactor), 0, n1 + n2);
    }

    private (Sums Value, int Evaluations) ZeroTemperatureIntegral(double a, int innerNodes)
    {
        QuadratureRule inner = GaussRules.LegendreUnit(innerNodes);
        int evaluations = 0;
        var result = new double[4];
        // One exp-sinh pass per quantity would repeat the inner sum; instead integrate a vector by reusing
        // the exp-sinh nodes through a cache of inner sums.
        var cache = new Dictionary<double, Sums>();
        Sums Inner(double y)
        {
            if (cache.TryGetValue(y, out Sums s)) return s;
            // Below y = 1e-9 every integrand is O(y^2 ln y) or smaller: negligible, and R = 1 − 1e-16 would round.
            if (y < 1e-9) return default;
            double e = 0, p = 0, p1 = 0, p2 = 0;
            double x = Math.Exp(-y);
            double y2 = y * y;
            for (int j = 0; j < inner.Nodes.Length; j++)
            {
                // s = sigma^2 moves the branch point of the Drude eps near s = 0 away from the rule's nodes.
                double sigma = inner.Nodes[j];
                double yl = sigma * sigma * y;
                double xi = C * yl / (2 * a);
                double eps1 = _plate.At(xi), eps2 = _sphere.At(xi);
                double yl2 = yl * yl;
                double d1 = (eps1 - 1) * yl2, d2 = (eps2 - 1) * yl2;
                (double tm1, double te1) = Reflection(eps1, d1, y, y2, yl2);
                (double tm2, double te2) = Reflection(eps2, d2, y, y2, yl2);
                if (double.IsNaN(tm1 * tm2))
                {
                    tm1 = tm2 = 1; // eps = inf at xi = 0 (only reached through rounding): the conductor limit
                }
                Accumulate(inner.Weights[j] * 2 * sigma * y, y, tm1 * tm2 * x, te1 * te2 * x, ref e, ref p, ref p1, ref p2);
                evaluations++;
            }
            s = new Sums(e, p, p1, p2);
            cache[y] = s;
            return s;
        }
        for (int m = 0; m < 4; m++)
        {
            int index = m;
            result[m] = ExpSinh.Integrate(y => Inner(y).Get(index), 1e-11).Value;
        }
        return (new Sums(result[0], result[1], result[2], result[3]), evaluations);
    }

    private static LifshitzResult Finish(double a, Sums s, Sums error, int terms, int evaluations)
    {
        double a2 = a * a;
        // E = S_E / a^2, P = −S_P / a^3, dP/da = S_P' / a^4, d²P/da² = −S_P'' / a^5 (prefactors already applied).
        return new LifshitzResult(
            s.E / a2, -s.P / (a2 * a), s.P1 / (a2 * a2), -s.P2 / (a2 * a2 * a),
            error.E / a2, error.P / (a2 * a), error.P1 / (a2 * a2), error.P2 / (a2 * a2 * a),
            terms, evaluations);
    }

    /// <summary>The four integrals carried together: free energy, pressure and its two derivatives.</summary>
    private readonly record struct Sums(double E, double P, double P1, double P2)
    {
        public Sums Plus(Sums o) => new(E + o.E, P + o.P, P1 + o.P1, P2 + o.P2);
        public Sums Minus(Sums o) => new(E - o.E, P - o.P, P1 - o.P1, P2 - o.P2);
        public Sums Scale(double f) => new(E * f, P * f, P1 * f, P2 * f);
        public Sums Times(Sums o) => new(E * o.E, P * o.P, P1 * o.P1, P2 * o.P2);
        public Sums Abs() => new(Math.Abs(E), Math.Abs(P), Math.Abs(P1), Math.Abs(P2));
        public Sums DivideBy(Sums o) => new(Safe(E, o.E), Safe(P, o.P), Safe(P1, o.P1), Safe(P2, o.P2));
        public bool AllBelow(Sums o) => E <= o.E && P <= o.P && P1 <= o.P1 && P2 <= o.P2;
        public Sums TailFactor() => new(Tail(E), Tail(P), Tail(P1), Tail(P2));
        public double Get(int i) => i switch { 0 => E, 1 => P, 2 => P1, _ => P2 };
        private static double Safe(double x, double y) => y == 0 ? 0 : x / y;
        private static double Tail(double ratio) => ratio >= 1 ? 1e3 : ratio / (1 - ratio);
    }
}
