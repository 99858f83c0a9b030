using MathNet.Numerics.LinearAlgebra;

namespace ForceFit.Fitting;

/// <summary>
/// Weighted linear least squares y = Sum_j b_j f_j(x) by Householder QR of the weighted design matrix, which avoids
/// the squared condition number of the normal equations (G. H. Golub, C. F. Van Loan, Matrix Computations, 5.3).
/// The columns are scaled to unit norm before the factorisation (equilibration) and the result unscaled.
/// </summary>
public static class LinearLeastSquares
{
    /// <summary>Fits with a design matrix given row by row; sigma null means unweighted (covariance scaled by s^2).</summary>
    /// <param name="design">n x k matrix of basis values f_j(x_i).</param>
    /// <param name="y">n observations.</param>
    /// <param name="sigma">n standard uncertainties, or null.</param>
    public static FitResult Fit(double[,] design, IReadOnlyList<double> y, IReadOnlyList<double>? sigma = null)
    {
        int n = design.GetLength(0), k = design.GetLength(1);
        if (y.Count != n) throw new ArgumentException("one observation per design row is needed");
        if (n < k) throw new ArgumentException($"{n} observations cannot determine {k} parameters");
        var a = Matrix<double>.Build.Dense(n, k);
        var b = Vector<double>.Build.Dense(n);
        for (int i = 0; i < n; i++)
        {
            double w = sigma is null ? 1 : 1 / sigma[i];
            if (!(w > 0) || !double.IsFinite(w)) throw new ArgumentException($"sigma of observation {i} must be positive and finite");
            for (int j = 0; j < k; j++) a[i, j] = design[i, j] * w;
            b[i] = y[i] * w;
        }
        var scale = new double[k];
        for (int j = 0; j < k; j++)
        {
            scale[j] = a.Column(j).L2Norm();
            if (scale[j] == 0) throw new ArgumentException($"basis function {j} is zero at every point");
            a.SetColumn(j, a.Column(j) / scale[j]);
        }
        var qr = a.QR(MathNet.Numerics.LinearAlgebra.Factorization.QRMethod.Thin);
        Vector<double> scaledSolution = qr.Solve(b);
        Vector<double> residual = b - a * scaledSolution;
        double chi2 = residual.DotProduct(residual);
        // (A^T A)^-1 = R^-1 R^-T for the scaled A.
        Matrix<double> rInverse = qr.R.Inverse();
        Matrix<double> scaledCovariance = rInverse * rInverse.Transpose();
        int dof = n - k;
        double factor = sigma is null ? (dof > 0 ? chi2 / dof : double.NaN) : 1.0;
        var parameters = new double[k];
        var covariance = new double[k, k];
        for (int i = 0; i < k; i++)
        {
            parameters[i] = scaledSolution[i] / scale[i];
            for (int j = 0; j < k; j++) covariance[i, j] = scaledCovariance[i, j] / (scale[i] * scale[j]) * factor;
        }
        return new FitResult(parameters, covariance, chi2, dof, 0, StopReason.Exact);
    }

    /// <summary>
    /// Generalised least squares with correlated observations of covariance C (A. C. Aitken, Proc. R. Soc. Edinb. 55, 42
    /// (1936)): with C = L L^T, the whitened problem L^-1 y = L^-1 A b has unit independent errors and is solved as
    /// above; the parameters' covariance is (A^T C^-1 A)^-1 and chi2 = r^T C^-1 r.
    /// </summary>
    public static FitResult FitCorrelated(double[,] design, IReadOnlyList<double> y, double[,] covariance)
    {
        int n = design.GetLength(0), k = design.GetLength(1);
        if (covariance.GetLength(0) != n || covariance.GetLength(1) != n) throw new ArgumentException("the covariance must be n x n for n observations");
        double[][] l = Matrices.WhiteningFactor(covariance);
        double[] whiteY = Matrices.ForwardSubstitute(l, y);
        var whiteDesign = new double[n, k];
        for (int j = 0; j < k; j++)
        {
            var column = new double[n];
            for (int i = 0; i < n; i++) column[i] = design[i, j];
            double[] white = Matrices.ForwardSubstitute(l, column);
            for (int i = 0; i < n; i++) whiteDesign[i, j] = white[i];
        }
        return Fit(whiteDesign, whiteY, Enumerable.Repeat(1.0, n).ToArray());
    }

    /// <summary>Fits a polynomial b0 + b1 x + ... + b_d x^d.</summary>
    public static FitResult Polynomial(IReadOnlyList<double> x, IReadOnlyList<double> y, int degree, IReadOnlyList<double>? sigma = null)
    {
        var design = new double[x.Count, degree + 1];
        for (int i = 0; i < x.Count; i++)
        {
            double p = 1;
            for (int j = 0; j <= degree; j++, p *= x[i]) design[i, j] = p;
        }
        return Fit(design, y, sigma);
    }
}
