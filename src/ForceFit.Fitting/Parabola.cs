namespace ForceFit.Fitting;

/// <summary>
/// A bias parabola y = c (V − V0)^2 + y0 (physics.md, Electrostatic calibration) from the weighted linear fit
/// y = a0 + a1 V + a2 V^2: curvature c = a2, V0 = −a1/(2 a2), vertex y0 = a0 − a1^2/(4 a2), with their covariance
/// propagated from that of (a0, a1, a2) through the exact Jacobian.
/// </summary>
/// <param name="Curvature">c.</param>
/// <param name="ResidualPotential">V0, the vertex position.</param>
/// <param name="Vertex">y0, the vertex height (the bias-free signal).</param>
/// <param name="Covariance">3 x 3 covariance of (c, V0, y0).</param>
/// <param name="ChiSquare">Chi-square of the fit.</param>
/// <param name="DegreesOfFreedom">Points minus 3.</param>
public sealed record ParabolaFit(double Curvature, double ResidualPotential, double Vertex, double[,] Covariance, double ChiSquare, int DegreesOfFreedom)
{
    /// <summary>Standard uncertainty of the curvature.</summary>
    public double CurvatureSigma => Math.Sqrt(Covariance[0, 0]);

    /// <summary>Standard uncertainty of V0.</summary>
    public double ResidualPotentialSigma => Math.Sqrt(Covariance[1, 1]);

    /// <summary>Standard uncertainty of the vertex height.</summary>
    public double VertexSigma => Math.Sqrt(Covariance[2, 2]);

    /// <summary>Fits the parabola to signals y_i (with sigmas) at biases V_i; at least three distinct biases are needed.</summary>
    public static ParabolaFit Fit(IReadOnlyList<double> bias, IReadOnlyList<double> y, IReadOnlyList<double> sigma)
    {
        if (bias.Distinct().Count() < 3) throw new ArgumentException("a parabola needs at least three distinct biases");
        // Centre the biases for conditioning: y = b0 + b1 u + b2 u^2 with u = V − m.
        double m = bias.Average();
        FitResult f = LinearLeastSquares.Polynomial(bias.Select(v => v - m).ToArray(), y, 2, sigma);
        double b0 = f.Parameters[0], b1 = f.Parameters[1], b2 = f.Parameters[2];
        double c = b2, v0 = m - b1 / (2 * b2), y0 = b0 - b1 * b1 / (4 * b2);
        // Jacobian of (c, V0, y0) with respect to (b0, b1, b2).
        double[,] j =
        {
            { 0, 0, 1 },
            { 0, -1 / (2 * b2), b1 / (2 * b2 * b2) },
            { 1, -b1 / (2 * b2), b1 * b1 / (4 * b2 * b2) },
        };
        var cov = new double[3, 3];
        for (int r = 0; r < 3; r++)
            for (int s = 0; s < 3; s++)
            {
                double sum = 0;
                for (int p = 0; p < 3; p++)
                    for (int q = 0; q < 3; q++) sum += j[r, p] * f.Covariance[p, q] * j[s, q];
                cov[r, s] = sum;
            }
        return new ParabolaFit(c, v0, y0, cov, f.ChiSquare, f.DegreesOfFreedom);
    }
}
