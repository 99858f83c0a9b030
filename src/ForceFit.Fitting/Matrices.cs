using ForceFit.Core.Numerics;
using MathNet.Numerics.LinearAlgebra;

namespace ForceFit.Fitting;

/// <summary>
/// The few dense matrix operations error propagation needs, on plain double[,] so that MathNet types stay inside
/// this project: products, sums, quadratic forms, J C J^T, symmetric inverse, Cholesky factor and the Schur complement.
/// </summary>
public static class Matrices
{
    /// <summary>A B.</summary>
    public static double[,] Multiply(double[,] a, double[,] b)
    {
        int n = a.GetLength(0), m = a.GetLength(1), p = b.GetLength(1);
        if (b.GetLength(0) != m) throw new ArgumentException("inner dimensions differ");
        var c = new double[n, p];
        for (int i = 0; i < n; i++)
            for (int k = 0; k < m; k++)
            {
                double aik = a[i, k];
                if (aik == 0) continue;
                for (int j = 0; j < p; j++) c[i, j] += aik * b[k, j];
            }
        return c;
    }

    /// <summary>A v.</summary>
    public static double[] Multiply(double[,] a, IReadOnlyList<double> v)
    {
        int n = a.GetLength(0), m = a.GetLength(1);
        if (v.Count != m) throw new ArgumentException("the vector's length differs from the matrix's columns");
        var r = new double[n];
        for (int i = 0; i < n; i++)
            for (int k = 0; k < m; k++) r[i] += a[i, k] * v[k];
        return r;
    }

    /// <summary>A + B.</summary>
    public static double[,] Add(double[,] a, double[,] b)
    {
        if (a.GetLength(0) != b.GetLength(0) || a.GetLength(1) != b.GetLength(1)) throw new ArgumentException("shapes differ");
        var c = (double[,])a.Clone();
        for (int i = 0; i < c.GetLength(0); i++)
            for (int j = 0; j < c.GetLength(1); j++) c[i, j] += b[i, j];
        return c;
    }

    /// <summary>x^T M y (with M = C^−1 and x = y = r, the chi-square of residuals r).</summary>
    public static double Bilinear(IReadOnlyList<double> x, double[,] m, IReadOnlyList<double> y)
    {
        double s = 0;
        for (int i = 0; i < x.Count; i++)
            for (int j = 0; j < y.Count; j++) s += x[i] * m[i, j] * y[j];
        return s;
    }

    /// <summary>Sum over the vectors of v v^T: the covariance of independent unit-variance directions v (each of length n).</summary>
    public static double[,] OuterSum(IEnumerable<double[]> vectors, int n)
    {
        var c = new double[n, n];
        foreach (double[] v in vectors)
            for (int i = 0; i < n; i++)
                for (int j = 0; j < n; j++) c[i, j] += v[i] * v[j];
        return c;
    }

    /// <summary>J C J^T: the covariance of J x when x has covariance C (linear error propagation).</summary>
    public static double[,] Propagate(double[,] j, double[,] c) => Multiply(Multiply(j, c), Transpose(j));

    /// <summary>A^T.</summary>
    public static double[,] Transpose(double[,] a)
    {
        int n = a.GetLength(0), m = a.GetLength(1);
        var t = new double[m, n];
        for (int i = 0; i < n; i++) for (int k = 0; k < m; k++) t[k, i] = a[i, k];
        return t;
    }

    /// <summary>The inverse of a symmetric positive-definite matrix (Cholesky), symmetrised.</summary>
    public static double[,] InverseSymmetric(double[,] a)
    {
        int n = a.GetLength(0);
        Matrix<double> m = Matrix<double>.Build.DenseOfArray(a);
        Matrix<double> inverse = m.Cholesky().Solve(Matrix<double>.Build.DenseIdentity(n));
        var r = new double[n, n];
        for (int i = 0; i < n; i++) for (int k = 0; k < n; k++) r[i, k] = 0.5 * (inverse[i, k] + inverse[k, i]);
        return r;
    }

    /// <summary>
    /// The inverse of a covariance and its rank: by Cholesky when it is positive definite; when rounding has left it
    /// singular (nearly noise-free data, whose shared errors dwarf the diagonal), the pseudo-inverse over the
    /// eigen-directions whose eigenvalue exceeds 1e-12 of the largest (the others carry no information and are not
    /// counted: a chi-square with it has Rank degrees of freedom; Golub and Van Loan, Matrix Computations, 5.5.4).
    /// </summary>
    public static (double[,] Inverse, int Rank) InverseOrPseudoInverse(double[,] a)
    {
        int n = a.GetLength(0);
        try
        {
            return (InverseSymmetric(a), n);
        }
        catch (ArgumentException)
        {
            var evd = Matrix<double>.Build.DenseOfArray(a).Evd(MathNet.Numerics.LinearAlgebra.Symmetricity.Symmetric);
            double[] values = evd.EigenValues.Select(v => v.Real).ToArray();
            double cutoff = 1e-12 * values.Max(Math.Abs);
            var r = new double[n, n];
            int rank = 0;
            for (int e = 0; e < n; e++)
            {
                if (!(values[e] > cutoff)) continue;
                rank++;
                for (int i = 0; i < n; i++)
                    for (int k = 0; k < n; k++) r[i, k] += evd.EigenVectors[i, e] * evd.EigenVectors[k, e] / values[e];
            }
            return (r, rank);
        }
    }

    /// <summary>
    /// The lower Cholesky factor L of a covariance, C = L L^T; its columns are independent one-sigma error
    /// directions (each column is how every component moves for one standard deviation of one combination).
    /// Zero rows and columns (exactly known components) are allowed.
    /// </summary>
    public static double[,] CholeskyLower(double[,] c)
    {
        double[][] rows = CholeskyRows(c);
        int n = rows.Length;
        var l = new double[n, n];
        for (int i = 0; i < n; i++) for (int k = 0; k <= i; k++) l[i, k] = rows[i][k];
        return l;
    }

    /// <summary>
    /// <see cref="CholeskyLower"/> as rows: row i holds L[i, 0..i] (the inner products run over contiguous memory,
    /// several at a time).
    /// </summary>
    public static double[][] CholeskyRows(double[,] c)
    {
        int n = c.GetLength(0);
        var l = new double[n][];
        for (int i = 0; i < n; i++)
        {
            var row = new double[i + 1];
            l[i] = row;
            for (int j = 0; j < i; j++)
            {
                double ljj = l[j][j];
                row[j] = ljj == 0 ? 0 : (c[i, j] - Dot(row.AsSpan(0, j), l[j].AsSpan(0, j))) / ljj;
            }
            double d = c[i, i] - Dot(row.AsSpan(0, i), row.AsSpan(0, i));
            // A combination with no variance left: its column stays zero.
            if (d <= 1e-15 * Math.Abs(c[i, i]) || d <= 0)
            {
                row[i] = 0;
                // The rows below must not use this column: they are computed with L[j, j] = 0 giving 0 above.
                continue;
            }
            row[i] = Math.Sqrt(d);
        }
        return l;
    }

    /// <summary>The rows of the Cholesky factor of an observations' covariance that must whiten them: every pivot positive.</summary>
    public static double[][] WhiteningFactor(double[,] covariance)
    {
        double[][] l = CholeskyRows(covariance);
        for (int i = 0; i < l.Length; i++) if (!(l[i][i] > 0)) throw new ArgumentException($"the covariance of observation {i} is not positive definite");
        return l;
    }

    /// <summary>
    /// Forward substitution L z = v with L from <see cref="CholeskyRows"/> (whitening: z = L^-1 v has unit covariance
    /// when v has covariance L L^T); rows before <paramref name="first"/>, where v is zero, stay zero.
    /// </summary>
    public static double[] ForwardSubstitute(double[][] l, IReadOnlyList<double> v, int first = 0)
    {
        var z = new double[l.Length];
        for (int i = first; i < l.Length; i++) z[i] = (v[i] - Dot(l[i].AsSpan(first, i - first), z.AsSpan(first, i - first))) / l[i][i];
        return z;
    }

    /// <summary>Sum of x[i] y[i] (<see cref="VectorKernels.Dot"/>).</summary>
    public static double Dot(ReadOnlySpan<double> x, ReadOnlySpan<double> y) => VectorKernels.Dot(x, y);

    /// <summary>y ← y − a x (<see cref="VectorKernels.SubtractScaled"/>).</summary>
    public static void SubtractScaled(Span<double> y, double a, ReadOnlySpan<double> x) => VectorKernels.SubtractScaled(y, a, x);

    /// <summary>
    /// Splits the covariance of a parameter vector partitioned into "local" indices and "shared" indices:
    /// Cov(local | shared fixed) = C_ll − C_ls C_ss^-1 C_sl, and the sensitivity D = C_ls C_ss^-1 of the local
    /// parameters to the shared ones, so that C_ll = conditional + D C_ss D^T exactly (Gaussian conditioning).
    /// </summary>
    public static (double[,] Conditional, double[,] Sensitivity) Condition(double[,] c, IReadOnlyList<int> local, IReadOnlyList<int> shared)
    {
        double[,] ll = Sub(c, local, local), ls = Sub(c, local, shared), ss = Sub(c, shared, shared);
        double[,] d = Multiply(ls, InverseSymmetric(ss));
        double[,] explained = Multiply(d, Transpose(ls));
        int n = local.Count;
        var conditional = new double[n, n];
        for (int i = 0; i < n; i++) for (int k = 0; k < n; k++) conditional[i, k] = ll[i, k] - 0.5 * (explained[i, k] + explained[k, i]);
        return (conditional, d);
    }

    /// <summary>The sub-matrix of the given rows and columns.</summary>
    public static double[,] Sub(double[,] a, IReadOnlyList<int> rows, IReadOnlyList<int> columns)
    {
        var s = new double[rows.Count, columns.Count];
        for (int i = 0; i < rows.Count; i++) for (int k = 0; k < columns.Count; k++) s[i, k] = a[rows[i], columns[k]];
        return s;
    }
}
