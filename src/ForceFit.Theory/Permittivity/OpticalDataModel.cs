namespace ForceFit.Theory.Permittivity;

/// <summary>The model used below the first tabulated frequency of optical data.</summary>
public enum OpticalTail
{
    /// <summary>Drude: eps'' = wp^2 gamma / (omega (omega^2 + gamma^2)) below the table.</summary>
    Drude,
    /// <summary>Plasma: no absorption below the table, plus the wp^2/xi^2 of the free-electron delta function at omega = 0.</summary>
    Plasma,
}

/// <summary>
/// eps(i xi) from tabulated optical data through the Kramers–Kronig relation (physics.md):
/// eps(i xi) = 1 + (2/pi) Integral_0^inf omega eps''(omega) / (omega^2 + xi^2) d omega, with eps'' = 2 n k.
/// Between table points eps'' is linear in omega and each segment is integrated exactly:
/// Integral (p + q omega) omega / (omega^2 + xi^2) = (p/2) ln(omega^2 + xi^2) + q (omega − xi atan(omega/xi)).
/// Below the first point a Drude or plasma tail with the user's parameters; above the last point eps'' falls as
/// omega^-3 (the high-frequency behaviour of free and bound electrons alike), matched to the last point.
/// </summary>
public sealed class OpticalDataModel : IPermittivity
{
    private readonly double[] _omega;
    private readonly double[] _epsImag;
    private readonly OpticalTail _tail;
    private readonly double _wp;
    private readonly double _gamma;

    /// <summary>Creates the model from angular frequencies (rad/s, increasing), n and k, and the tail.</summary>
    public OpticalDataModel(IReadOnlyList<double> angularFrequencies, IReadOnlyList<double> n, IReadOnlyList<double> k,
        OpticalTail tail, double plasmaFrequency, double damping)
    {
        if (angularFrequencies.Count < 2 || n.Count != angularFrequencies.Count || k.Count != angularFrequencies.Count)
            throw new ArgumentException("optical data need at least two rows of frequency, n and k");
        for (int i = 1; i < angularFrequencies.Count; i++)
            if (!(angularFrequencies[i] > angularFrequencies[i - 1]))
                throw new ArgumentException("optical-data frequencies must increase strictly");
        if (!(angularFrequencies[0] > 0)) throw new ArgumentException("optical-data frequencies must be positive");
        _omega = angularFrequencies.ToArray();
        _epsImag = n.Zip(k, (nn, kk) => 2 * nn * kk).ToArray();
        _tail = tail;
        _wp = plasmaFrequency;
        _gamma = damping;
    }

    /// <summary>eps'' at a table frequency, for checks.</summary>
    public double ImaginaryPartAt(int index) => _epsImag[index];

    /// <inheritdoc />
    public bool IsConductor => true;

    /// <inheritdoc />
    public double Static => double.PositiveInfinity;

    /// <inheritdoc />
    public double ZeroFrequencyPlasmaSquared => _tail == OpticalTail.Plasma ? _wp * _wp : 0.0;

    /// <inheritdoc />
    public string Describe() =>
        $"optical data, {_omega.Length} points from {_omega[0]:G4} to {_omega[^1]:G4} rad/s, {_tail} tail (wp = {_wp:G6} rad/s)";

    /// <inheritdoc />
    public double At(double xi)
    {
        double integral = BelowTable(xi) + Table(xi) + AboveTable(xi);
        double eps = 1 + 2 / Math.PI * integral;
        if (_tail == OpticalTail.Plasma) eps += _wp * _wp / (xi * xi);
        return eps;
    }

    private double Table(double xi)
    {
        double sum = 0, xi2 = xi * xi;
        for (int i = 0; i + 1 < _omega.Length; i++)
        {
            double a = _omega[i], b = _omega[i + 1];
            double q = (_epsImag[i + 1] - _epsImag[i]) / (b - a);
            double p = _epsImag[i] - q * a;
            double log = Math.Log((b * b + xi2) / (a * a + xi2));
            // omega − xi atan(omega/xi) between a and b, with atan(b/xi) − atan(a/xi) = atan(xi (b − a) / (xi^2 + a b)).
            double linear = (b - a) - xi * Math.Atan(xi * (b - a) / (xi2 + a * b));
            sum += 0.5 * p * log + q * linear;
        }
        return sum;
    }

    private double BelowTable(double xi)
    {
        if (_tail == OpticalTail.Plasma || _gamma == 0) return 0;
        // wp^2 gamma Integral_0^w0 d omega / ((omega^2 + gamma^2)(omega^2 + xi^2))
        //   = wp^2 gamma [phi(gamma) − phi(xi)] / (xi^2 − gamma^2), phi(x) = atan(w0/x)/x.
        double w0 = _omega[0], g = _gamma;
        double Phi(double x) => Math.Atan(w0 / x) / x;
        if (Math.Abs(xi - g) < 1e-5 * g)
        {
            // Limit xi → gamma: −phi'(gamma) / (2 gamma), phi'(x) = −w0/(x (x^2 + w0^2)) − atan(w0/x)/x^2.
            double dphi = -w0 / (g * (g * g + w0 * w0)) - Math.Atan(w0 / g) / (g * g);
            return _wp * _wp * g * (-dphi / (2 * g));
        }
        return _wp * _wp * g * (Phi(g) - Phi(xi)) / (xi * xi - g * g);
    }

    private double AboveTable(double xi)
    {
        // eps'' = A / omega^3 above w1: Integral_w1^inf A / (omega^2 (omega^2 + xi^2)) d omega
        //   = (A / xi^2) [1/w1 − atan(xi/w1)/xi]  (→ A / (3 w1^3) as xi → 0).
        double w1 = _omega[^1];
        double amplitude = _epsImag[^1] * w1 * w1 * w1;
        double r = xi / w1;
        if (r < 1e-3) return amplitude / (3 * w1 * w1 * w1) * (1 - 3 * r * r / 5);
        return amplitude / (xi * xi) * (1 / w1 - Math.Atan(r) / xi);
    }
}
