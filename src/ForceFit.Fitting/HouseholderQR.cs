namespace ForceFit.Fitting;

/// <summary>
/// QR factorisation of an n x k matrix (n ≥ k) by Householder reflections (G. H. Golub, C. F. Van Loan, Matrix
/// Computations, 4th ed., algorithm 5.2.1), on columns stored contiguously so that each reflection runs over
/// consecutive memory. Gives R and Q^T applied to vectors; Q itself is never formed.
/// </summary>
public sealed class HouseholderQR
{
    private readonly int _n, _k;
    private readonly double[][] _columns; // reflected columns; below the diagonal the Householder vectors
    private readonly double[] _beta;
    private readonly double[] _diagonal;

    /// <summary>Factorises the matrix given as its columns (each of length n; copied).</summary>
    public HouseholderQR(IReadOnlyList<double[]> columns)
    {
        _k = columns.Count;
        _n = _k == 0 ? 0 : columns[0].Length;
        if (_n < _k) throw new ArgumentException($"{_n} rows cannot be factorised for {_k} columns");
        _columns = columns.Select(c => (double[])c.Clone()).ToArray();
        _beta = new double[_k];
        _diagonal = new double[_k];
        for (int j = 0; j < _k; j++)
        {
            Span<double> x = _columns[j].AsSpan(j);
            double norm = Math.Sqrt(Matrices.Dot(x, x));
            if (norm == 0)
            {
                _beta[j] = 0;
                _diagonal[j] = 0;
                continue;
            }
            // v = x − alpha e1 with alpha = −sign(x1) |x| (no cancellation); H = I − beta v v^T, beta = 2 / v^T v.
            double alpha = x[0] > 0 ? -norm : norm;
            x[0] -= alpha;
            _beta[j] = 2 / Matrices.Dot(x, x);
            _diagonal[j] = alpha;
            for (int c = j + 1; c < _k; c++) Reflect(j, _columns[c]);
        }
    }

    // y ← H_j y on rows j..n−1.
    private void Reflect(int j, double[] y)
    {
        if (_beta[j] == 0) return;
        ReadOnlySpan<double> v = _columns[j].AsSpan(j);
        Span<double> w = y.AsSpan(j);
        Matrices.SubtractScaled(w, _beta[j] * Matrices.Dot(v, w), v);
    }

    /// <summary>The upper-triangular k x k factor R.</summary>
    public double[,] R
    {
        get
        {
            var r = new double[_k, _k];
            for (int j = 0; j < _k; j++)
            {
                for (int i = 0; i < j; i++) r[i, j] = _columns[j][i];
                r[j, j] = _diagonal[j];
            }
            return r;
        }
    }

    /// <summary>The first k entries of Q^T y.</summary>
    public double[] TransposeQTimes(IReadOnlyList<double> y)
    {
        var z = y.ToArray();
        for (int j = 0; j < _k; j++) Reflect(j, z);
        return z[.._k];
    }

    /// <summary>The least-squares solution of A x = y (R x = Q^T y by back substitution); R must be non-singular.</summary>
    public double[] Solve(IReadOnlyList<double> y)
    {
        double[] z = TransposeQTimes(y);
        var x = new double[_k];
        for (int i = _k - 1; i >= 0; i--)
        {
            double sum = z[i];
            for (int c = i + 1; c < _k; c++) sum -= _columns[c][i] * x[c];
            x[i] = sum / _diagonal[i];
        }
        return x;
    }
}
