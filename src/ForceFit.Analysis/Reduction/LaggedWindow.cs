namespace ForceFit.Analysis.Reduction;

/// <summary>
/// Central moments (second to fifth) of the true readings a ramp window averages over, about their mean (m^k).
/// </summary>
public readonly record struct ReadingMoments(double Second, double Third, double Fourth, double Fifth)
{
    /// <summary>
    /// The moments of samples gathered in bins: bin b holds n_b samples evenly spaced by its sample step in reading,
    /// centred on its mean reading, which lies d_b from the window's mean (the discrete uniform has central moments
    /// mu2 = s^2 (n^2 − 1)/12 and mu4 = s^4 (n^2 − 1)(3 n^2 − 7)/240, odd ones zero; binomial expansion about the window's
    /// mean: E(d + e)^k).
    /// </summary>
    public static ReadingMoments OfBins(IEnumerable<(double Offset, int Samples, double Spacing)> bins)
    {
        double n = 0, m2 = 0, m3 = 0, m4 = 0, m5 = 0;
        foreach (var (d, count, s) in bins)
        {
            double c = count, s2 = s * s;
            double u2 = s2 * (c * c - 1) / 12, u4 = s2 * s2 * (c * c - 1) * (3 * c * c - 7) / 240;
            double d2 = d * d;
            n += c;
            m2 += c * (d2 + u2);
            m3 += c * d * (d2 + 3 * u2);
            m4 += c * (d2 * d2 + 6 * d2 * u2 + u4);
            m5 += c * d * (d2 * d2 + 10 * d2 * u2 + 5 * u4);
        }
        return n > 0 ? new ReadingMoments(m2 / n, m3 / n, m4 / n, m5 / n) : default;
    }
}

/// <summary>A quadrature rule of up to three nodes: the mean of M over a window is sum_k W_k M(X_k).</summary>
public readonly record struct WindowRule(double X0, double X1, double X2, double W0, double W1, double W2)
{
    /// <summary>The rule applied to M.</summary>
    public double Apply(Func<double, double> m) => W0 * m(X0) + (W1 != 0 ? W1 * m(X1) : 0) + (W2 != 0 ? W2 * m(X2) : 0);
}

/// <summary>
/// The mean of a smooth M over a ramp window whose recorded signal lags: the readings, with mean r and central moments
/// m_k, are recorded through a first-order filter that delays the signal by a random D (mean L) while the reading moves
/// at speed u, so the window averages M(r + e − u D). The rule is the three-point Gauss quadrature of that variable's
/// distribution (from its moments to the fifth; G. H. Golub, J. H. Welsch, Math. Comp. 23, 221 (1969): the nodes are
/// the roots of the monic cubic orthogonal to 1, x, x^2), exact for M of degree five. The delay of a filter run once
/// per sample, y_n = x_n + rho (y_(n−1) − x_n), is geometric, P(D = j dt) = (1 − rho) rho^j, with mean L = dt rho/(1 − rho);
/// its cumulants are kappa_n = (L + dt)^n q A_(n−1)(q) with q = rho and the Eulerian polynomials A_1 = 1, A_2 = 1 + q,
/// A_3 = 1 + 4q + q^2, A_4 = 1 + 11q + 11q^2 + q^3 (variance L (L + dt)); a continuous filter (dt → 0) gives the
/// exponential delay, kappa_n = (n − 1)! L^n. The readings and the delay are independent, so cumulants add.
/// </summary>
public static class LaggedWindow
{
    /// <summary>The rule for a window.</summary>
    /// <param name="reading">Mean reading r of the window (m).</param>
    /// <param name="moments">Central moments of the true readings about r.</param>
    /// <param name="speed">Sweep speed u (m/s, signed).</param>
    /// <param name="lag">Mean delay L (s); a negative fitted value shifts the window but is given no spread.</param>
    /// <param name="step">The filter's time step dt (s): the sample interval for a per-sample filter, 0 for a continuous one.</param>
    public static WindowRule Rule(double reading, ReadingMoments moments, double speed, double lag, double step)
    {
        double centre = reading - lag * speed;
        // Cumulants of −u (D − L).
        double l = Math.Max(0, lag), scale = l + Math.Max(0, step);
        double q = scale > 0 ? l / scale : 0, g = scale * speed;
        double k2d = g * g * q, k3d = -g * g * g * q * (1 + q), k4d = g * g * g * g * q * (1 + 4 * q + q * q),
            k5d = -g * g * g * g * g * q * (1 + 11 * q + 11 * q * q + q * q * q);
        // Cumulants of the readings from their central moments, added, and turned back into central moments.
        double m2 = moments.Second, m3 = moments.Third;
        double k2 = m2 + k2d, k3 = m3 + k3d, k4 = moments.Fourth - 3 * m2 * m2 + k4d, k5 = moments.Fifth - 10 * m3 * m2 + k5d;
        double mu2 = k2, mu3 = k3, mu4 = k4 + 3 * k2 * k2, mu5 = k5 + 10 * k3 * k2;
        return Gauss(centre, mu2, mu3, mu4, mu5);
    }

    /// <summary>The Gauss rule with up to three nodes for a distribution with mean c and central moments mu2..mu5.</summary>
    internal static WindowRule Gauss(double c, double mu2, double mu3, double mu4, double mu5)
    {
        if (!(mu2 > 0)) return new WindowRule(c, c, c, 1, 0, 0);
        // The cubic x^3 + c2 x^2 + c1 x + c0 orthogonal to 1, x, x^2; its Hankel determinant mu2 (mu4 − mu2^2) − mu3^2
        // vanishes for a two-point distribution, where the two-point rule (moments to the third) is exact instead.
        double det = (mu4 - mu2 * mu2) * mu2 - mu3 * mu3;
        if (!(det > 1e-9 * mu2 * mu2 * mu2))
        {
            // x^2 + b1 x + b0 orthogonal to 1, x: b0 = −mu2, b1 = −mu3/mu2.
            double half = 0.5 * mu3 / mu2, root = Math.Sqrt(half * half + mu2);
            double a = half + root, b = half - root;
            return new WindowRule(c + b, c + a, c, a / (a - b), -b / (a - b), 0);
        }
        double c2 = ((mu3 * mu2 - mu5) * mu2 + mu3 * mu4) / det;
        double c1 = (-(mu4 - mu2 * mu2) * mu4 - (mu3 * mu2 - mu5) * mu3) / det;
        double c0 = -mu3 - c2 * mu2;
        // Three real roots (trigonometric form of the depressed cubic y^3 + p y + r, x = y − c2/3).
        double p = c1 - c2 * c2 / 3, r = 2 * c2 * c2 * c2 / 27 - c2 * c1 / 3 + c0;
        double amplitude = 2 * Math.Sqrt(Math.Max(0, -p / 3));
        double cosine = amplitude > 0 ? Math.Clamp(3 * r / (p * amplitude), -1, 1) : 0;
        double phi = Math.Acos(cosine) / 3;
        double x0 = amplitude * Math.Cos(phi) - c2 / 3, x1 = amplitude * Math.Cos(phi - 2 * Math.PI / 3) - c2 / 3, x2 = amplitude * Math.Cos(phi - 4 * Math.PI / 3) - c2 / 3;
        // Weights E[l_i(X)] of the Lagrange basis: (mu2 + x_j x_k) / ((x_i − x_j)(x_i − x_k)).
        double w0 = (mu2 + x1 * x2) / ((x0 - x1) * (x0 - x2)), w1 = (mu2 + x0 * x2) / ((x1 - x0) * (x1 - x2)), w2 = (mu2 + x0 * x1) / ((x2 - x0) * (x2 - x1));
        return new WindowRule(c + x0, c + x1, c + x2, w0, w1, w2);
    }
}
