using MathNet.Numerics.LinearAlgebra;

namespace ForceFit.Fitting;

/// <summary>A model y = f(x; p) with an optional analytic Jacobian.</summary>
/// <param name="Value">f(x, p).</param>
/// <param name="Gradient">df/dp_j at (x, p) written into the span, or null for central differences.</param>
public sealed record NonlinearModel(Func<double, double[], double> Value, Action<double, double[], Span<double>>? Gradient = null);

/// <summary>Stopping tolerances of <see cref="LevenbergMarquardt"/>.</summary>
/// <param name="ParameterTolerance">Stop when every relative parameter step is below this.</param>
/// <param name="ChiSquareTolerance">Stop when the relative chi-square decrease of an accepted step is below this.</param>
/// <param name="MaxIterations">Give up after this many iterations.</param>
public sealed record FitOptions(double ParameterTolerance = 1e-14, double ChiSquareTolerance = 1e-16, int MaxIterations = 5000);

/// <summary>
/// Levenberg–Marquardt least squares (K. Levenberg, Q. Appl. Math. 2, 164 (1944); D. W. Marquardt, J. SIAM 11, 431
/// (1963)) with Marquardt's scaling by diag(J^T J) (kept at its running maximum, as in J. J. More's MINPACK
/// implementation, Lecture Notes in Mathematics 630 (1978)); each step solves the damped problem by QR, not by the
/// normal equations: J = Q R once per iteration, then for each trial lambda the small stacked problem
/// [R; sqrt(lambda D)] d = [Q^T r; 0] (MINPACK's qrsolv idea). The covariance at the solution is (J^T W J)^-1 from the
/// SVD of R (the singular values of J), scaled by RSS/dof when no sigmas are given.
/// </summary>
public static class LevenbergMarquardt
{
    /// <summary>Fits the model to (x, y) from a start; sigma null means unweighted.</summary>
    public static FitResult Fit(NonlinearModel model, IReadOnlyList<double> x, IReadOnlyList<double> y, double[] start,
        IReadOnlyList<double>? sigma = null, FitOptions? options = null)
    {
        options ??= new FitOptions();
        int n = x.Count, k = start.Length;
        if (y.Count != n) throw new ArgumentException("x and y differ in length");
        if (n < k) throw new ArgumentException($"{n} observations cannot determine {k} parameters");
        var w = new double[n];
        for (int i = 0; i < n; i++) w[i] = sigma is null ? 1 : 1 / sigma[i];
        double[] p = (double[])start.Clone();
        double chi2 = ChiSquare(model, x, y, w, p);
        var jacobian = Matrix<double>.Build.Dense(n, k);
        var diag = new double[k];
        double lambda = 1e-3;
        int iteration = 0;
        StopReason stop = StopReason.IterationLimit;
        while (iteration < options.MaxIterations)
        {
            iteration++;
            Jacobian(model, x, w, p, jacobian);
            var r = Vector<double>.Build.Dense(n, i => (y[i] - model.Value(x[i], p)) * w[i]);
            Vector<double> gradient = jacobian.TransposeThisAndMultiply(r);
            for (int j = 0; j < k; j++) diag[j] = Math.Max(diag[j], jacobian.Column(j).DotProduct(jacobian.Column(j)));
            if (gradient.AbsoluteMaximum() <= 1e-300 || chi2 == 0)
            {
                stop = StopReason.GradientVanished;
                break;
            }
            bool accepted = false;
            // min |J d − r|^2 + lambda |D d|^2 = min |R d − Q^T r|^2 + lambda |D d|^2 + const, with J = Q R.
            var decomposition = new HouseholderQR(Columns(jacobian));
            double[,] upper = decomposition.R;
            double[] qtr = decomposition.TransposeQTimes(r.ToArray());
            while (!accepted)
            {
                // Solve min |[R; sqrt(lambda D)] d − [Q^T r; 0]| by QR of the stacked 2k x k matrix.
                var stacked = new double[k][];
                for (int j = 0; j < k; j++)
                {
                    stacked[j] = new double[2 * k];
                    for (int i = 0; i <= j; i++) stacked[j][i] = upper[i, j];
                    stacked[j][k + j] = Math.Sqrt(lambda * Math.Max(diag[j], 1e-300));
                }
                var rhs = new double[2 * k];
                Array.Copy(qtr, rhs, k);
                double[] step = new HouseholderQR(stacked).Solve(rhs);
                var trial = new double[k];
                for (int j = 0; j < k; j++) trial[j] = p[j] + step[j];
                double trialChi2 = ChiSquare(model, x, y, w, trial);
                if (double.IsFinite(trialChi2) && trialChi2 <= chi2)
                {
                    double decrease = (chi2 - trialChi2) / Math.Max(chi2, 1e-300);
                    double relativeStep = 0;
                    for (int j = 0; j < k; j++) relativeStep = Math.Max(relativeStep, Math.Abs(step[j]) / Math.Max(Math.Abs(p[j]), 1e-300));
                    p = trial;
                    chi2 = trialChi2;
                    lambda = Math.Max(lambda / 10, 1e-15);
                    accepted = true;
                    if (relativeStep < options.ParameterTolerance) stop = StopReason.ParametersConverged;
                    else if (decrease < options.ChiSquareTolerance && decrease >= 0 && relativeStep < 1e-8) stop = StopReason.ChiSquareConverged;
                    else continue;
                    goto done;
                }
                lambda *= 10;
                if (lambda > 1e16)
                {
                    // No downhill step even with heavy damping: at a minimum to machine precision, or stuck.
                    stop = gradient.AbsoluteMaximum() * Math.Sqrt(diag.Max()) < 1e-8 * Math.Max(chi2, 1e-300) ? StopReason.ChiSquareConverged : StopReason.NoProgress;
                    if (stop == StopReason.NoProgress && IsStationary(model, x, y, w, p, chi2)) stop = StopReason.ChiSquareConverged;
                    goto done;
                }
            }
        }
    done:
        Jacobian(model, x, w, p, jacobian);
        int dof = n - k;
        // Covariance from the SVD of the scaled Jacobian: reciprocal condition below 1e-12 (J^T J below 1e-24) means
        // the data do not determine some combination of parameters.
        var columnScale = Enumerable.Range(0, k).Select(j => Math.Max(jacobian.Column(j).L2Norm(), 1e-300)).ToArray();
        Matrix<double> scaled = Matrix<double>.Build.Dense(n, k, (i, j) => jacobian[i, j] / columnScale[j]);
        // The singular values and right vectors of J are those of R in J = Q R (Q has orthonormal columns).
        var svd = (n > k ? Matrix<double>.Build.DenseOfArray(new HouseholderQR(Columns(scaled)).R) : scaled).Svd(computeVectors: true);
        double rcond = svd.S[svd.S.Count - 1] / svd.S[0];
        if (!(rcond > 1e-12) && stop != StopReason.IterationLimit) stop = StopReason.Singular;
        Matrix<double> vt = svd.VT;
        Matrix<double> inverse = Matrix<double>.Build.Dense(k, k, (a, b) =>
        {
            double sum = 0;
            for (int m = 0; m < k; m++) sum += vt[m, a] * vt[m, b] / (svd.S[m] * svd.S[m]);
            return sum / (columnScale[a] * columnScale[b]);
        });
        double factor = sigma is null ? (dof > 0 ? chi2 / dof : double.NaN) : 1.0;
        var covariance = new double[k, k];
        for (int i = 0; i < k; i++) for (int j = 0; j < k; j++) covariance[i, j] = inverse[i, j] * factor;
        return new FitResult(p, covariance, chi2, dof, iteration, stop);
    }

    /// <summary>
    /// Generalised least squares: minimises (y − f(p))^T C^-1 (y − f(p)) for observations with a full covariance C,
    /// by whitening with the Cholesky factor C = L L^T (residuals L^-1 (y − f)) and the Levenberg–Marquardt fit above
    /// on unit sigmas; the covariance is then (J^T C^-1 J)^-1 and chi-square the generalised one. The model gives all
    /// n values at once; its Jacobian is taken by central differences of the whole vector, or, where
    /// <paramref name="rowsOf"/> names the only observations a parameter moves, of those rows alone through
    /// <paramref name="row"/> (which must agree with <paramref name="model"/>).
    /// </summary>
    public static FitResult FitCorrelated(Func<double[], double[]> model, IReadOnlyList<double> y, double[,] covariance, double[] start, FitOptions? options = null,
        Func<double[], int, double>? row = null, IReadOnlyList<int[]?>? rowsOf = null)
    {
        int n = y.Count, k = start.Length;
        double[][] l = Matrices.WhiteningFactor(covariance);
        double[] Whiten(IReadOnlyList<double> v, int first = 0) => Matrices.ForwardSubstitute(l, v, first);
        double[] yw = Whiten(y);
        double[]? lastP = null, lastValue = null, lastJacobianP = null;
        double[,]? lastJacobian = null;
        double[] ValueAt(double[] p)
        {
            if (lastP is null || !lastP.AsSpan().SequenceEqual(p)) { lastP = (double[])p.Clone(); lastValue = Whiten(model(p)); }
            return lastValue!;
        }
        double[,] JacobianAt(double[] p)
        {
            if (lastJacobianP is not null && lastJacobianP.AsSpan().SequenceEqual(p)) return lastJacobian!;
            var jac = new double[n, k];
            var q = (double[])p.Clone();
            for (int j = 0; j < k; j++)
            {
                double h = 6e-6 * Math.Max(Math.Abs(p[j]), 1e-8);
                if (row is not null && rowsOf?[j] is { } rows)
                {
                    var difference = new double[n];
                    int first = n;
                    foreach (int i in rows)
                    {
                        q[j] = p[j] + h;
                        double upRow = row(q, i);
                        q[j] = p[j] - h;
                        difference[i] = upRow - row(q, i);
                        first = Math.Min(first, i);
                    }
                    q[j] = p[j];
                    double[] sparse = Whiten(difference, first);
                    for (int i = 0; i < n; i++) jac[i, j] = sparse[i] / (2 * h);
                    continue;
                }
                q[j] = p[j] + h;
                double[] up = model(q);
                q[j] = p[j] - h;
                double[] down = model(q);
                q[j] = p[j];
                // Whitening is linear: one triangular solve of the difference instead of one per side.
                for (int i = 0; i < n; i++) up[i] -= down[i];
                double[] column = Whiten(up);
                for (int i = 0; i < n; i++) jac[i, j] = column[i] / (2 * h);
            }
            lastJacobianP = (double[])p.Clone();
            lastJacobian = jac;
            return jac;
        }
        var whitened = new NonlinearModel((x, p) => ValueAt(p)[(int)x], (x, p, g) =>
        {
            double[,] jac = JacobianAt(p);
            for (int j = 0; j < k; j++) g[j] = jac[(int)x, j];
        });
        var xs = Enumerable.Range(0, n).Select(i => (double)i).ToArray();
        return Fit(whitened, xs, yw, start, Enumerable.Repeat(1.0, n).ToArray(), options);
    }

    private static double[][] Columns(Matrix<double> m) => Enumerable.Range(0, m.ColumnCount).Select(j => m.Column(j).ToArray()).ToArray();

    // A point where no step along the damped directions lowers chi-square by more than rounding: relative change 1e-14.
    private static bool IsStationary(NonlinearModel model, IReadOnlyList<double> x, IReadOnlyList<double> y, double[] w, double[] p, double chi2)
    {
        for (int j = 0; j < p.Length; j++)
        {
            double[] q = (double[])p.Clone();
            q[j] *= 1 + 1e-7;
            if (ChiSquare(model, x, y, w, q) < chi2 * (1 - 1e-14)) return false;
        }
        return true;
    }

    private static double ChiSquare(NonlinearModel model, IReadOnlyList<double> x, IReadOnlyList<double> y, double[] w, double[] p)
    {
        double sum = 0;
        for (int i = 0; i < x.Count; i++)
        {
            double r = (y[i] - model.Value(x[i], p)) * w[i];
            sum += r * r;
        }
        return sum;
    }

    private static void Jacobian(NonlinearModel model, IReadOnlyList<double> x, double[] w, double[] p, Matrix<double> jacobian)
    {
        int k = p.Length;
        Span<double> g = stackalloc double[k];
        double[] shifted = (double[])p.Clone();
        for (int i = 0; i < x.Count; i++)
        {
            if (model.Gradient is not null)
            {
                model.Gradient(x[i], p, g);
            }
            else
            {
                for (int j = 0; j < k; j++)
                {
                    // Central difference with a step of cbrt(eps) relative (truncation and rounding balanced).
                    double h = 6e-6 * Math.Max(Math.Abs(p[j]), 1e-8);
                    shifted[j] = p[j] + h;
                    double up = model.Value(x[i], shifted);
                    shifted[j] = p[j] - h;
                    double down = model.Value(x[i], shifted);
                    shifted[j] = p[j];
                    g[j] = (up - down) / (2 * h);
                }
            }
            for (int j = 0; j < k; j++) jacobian[i, j] = g[j] * w[i];
        }
    }
}
