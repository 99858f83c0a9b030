using ForceFit.Fitting;

namespace ForceFit.Analysis.Reduction;

/// <summary>One independent Gaussian direction of a systematic error: how every point of the night moves for one standard deviation.</summary>
/// <param name="Source">Source name as in the budget ("calibration", "radius", "amplitude", ...).</param>
/// <param name="Run">The run it belongs to, or null for a source shared by every run of the night.</param>
/// <param name="Values">Signed change of each point's value (N/m or N) at fixed separation.</param>
public sealed record SystematicRow(string Source, string? Run, double[] Values);

/// <summary>How one run agrees with the rest of the night.</summary>
/// <param name="Run">Run name.</param>
/// <param name="Points">Grid points it shares with the other runs.</param>
/// <param name="ChiSquare">Chi-square of (run − mean of the others) with the full covariance of both (shared systematics excluded).</param>
/// <param name="PValue">Its probability.</param>
/// <param name="Flagged">True when p is below <see cref="NightCombiner.FlagProbability"/>.</param>
/// <param name="Reason">Why it was flagged, in words, or null.</param>
public sealed record RunConsistency(string Run, int Points, double ChiSquare, double PValue, bool Flagged, string? Reason);

/// <summary>The night's result on a common separation grid.</summary>
/// <param name="Separation">Grid separations (m), ascending.</param>
/// <param name="Value">Weighted mean over the runs covering each point: force gradient (N/m) or force (N).</param>
/// <param name="RandomCovariance">Covariance from the runs' noise (calibrations held fixed).</param>
/// <param name="Systematics">Every systematic direction: each run's own (calibration, given constants) and the shared ones (piezo scale when given, radius, amplitude).</param>
/// <param name="RunsAtPoint">How many runs cover each point.</param>
/// <param name="BirgeRatio">Per point: sqrt of the weighted scatter of the runs over n − 1 (NaN for a single run).</param>
/// <param name="HalfWidth95">Per point: half-width of the 95% interval of the mean from the independent uncertainties, widened to Student's t times the observed scatter when that is larger.</param>
/// <param name="Consistency">Each run's agreement with the others (empty for a single run).</param>
/// <param name="Frequency">True for force gradients (frequency mode), false for forces.</param>
public sealed record CombinedNight(double[] Separation, double[] Value, double[,] RandomCovariance, IReadOnlyList<SystematicRow> Systematics,
    int[] RunsAtPoint, double[] BirgeRatio, double[] HalfWidth95, IReadOnlyList<RunConsistency> Consistency, bool Frequency)
{
    /// <summary>Random standard uncertainty per point.</summary>
    public double[] RandomSigma => Enumerable.Range(0, Value.Length).Select(i => Math.Sqrt(RandomCovariance[i, i])).ToArray();

    /// <summary>Systematic standard uncertainty per point (all rows in quadrature).</summary>
    public double[] SystematicSigma => Enumerable.Range(0, Value.Length).Select(i => Math.Sqrt(Systematics.Sum(r => r.Values[i] * r.Values[i]))).ToArray();

    /// <summary>The systematic covariance Sum over rows of r r^T.</summary>
    public double[,] SystematicCovariance => Matrices.OuterSum(Systematics.Select(r => r.Values), Value.Length);

    /// <summary>Birge ratio over the whole night: sqrt(Sum of the points' weighted scatter / Sum of (n − 1)), NaN for a single run.</summary>
    public double OverallBirgeRatio { get; init; } = double.NaN;

    /// <summary>Standard uncertainty per point of each source name (its rows in quadrature), in order of first appearance.</summary>
    public IReadOnlyList<(string Source, double[] Sigma)> Budget() => Systematics.GroupBy(r => r.Source)
        .Select(g => (g.Key, Enumerable.Range(0, Value.Length).Select(i => Math.Sqrt(g.Sum(r => r.Values[i] * r.Values[i]))).ToArray()))
        .ToArray();
}

/// <summary>
/// Brings each run's points onto a common separation grid and combines them (issue: the night). Within a run the
/// value at a grid point is interpolated linearly in ln a between its two neighbours after dividing by a smooth
/// shape of the whole night (so the steep power law is not interpolated linearly); a run never contributes outside
/// its own range. Runs are combined as weighted means with weights 1/(random + own systematic variance); sources
/// shared by all runs (same sphere, same piezo, same amplitude setting) move the mean coherently and do not enter
/// the weights. Every step is linear in the runs' values, so covariances propagate exactly.
/// </summary>
public static class NightCombiner
{
    /// <summary>A run whose chi-square against the others has p below this is flagged (our choice, stated in the report).</summary>
    public const double FlagProbability = 1e-3;

    /// <summary>Combines the runs of one night (all the same mode).</summary>
    public static CombinedNight Combine(IReadOnlyList<RunResult> runs, bool frequency)
    {
        if (runs.Count == 0) throw new ArgumentException("no runs to combine", nameof(runs));
        CurveShape shape = CurveShape.Fit(
            runs.SelectMany(r => r.Separation).ToArray(), runs.SelectMany(r => r.Value).ToArray(), runs.SelectMany(r => r.RandomSigma).ToArray());
        double[] grid = Grid(runs);
        // Per run: interpolation matrix W (grid x points), its coverage, and the interpolated pieces; grid points in a
        // gap between runs' ranges are dropped (never extrapolate).
        var parts = runs.Select(r => Interpolate(r, grid, shape)).ToArray();
        int[] covered = Enumerable.Range(0, grid.Length).Where(g => parts.Any(p => p.Covers[g])).ToArray();
        if (covered.Length < grid.Length)
        {
            grid = covered.Select(g => grid[g]).ToArray();
            parts = runs.Select(r => Interpolate(r, grid, shape)).ToArray();
        }
        int n = grid.Length;

        // Weights per grid point from each run's independent variance (random + own systematic rows).
        var weight = new double[runs.Count, n];
        for (int r = 0; r < runs.Count; r++)
            for (int g = 0; g < n; g++)
                if (parts[r].Covers[g]) weight[r, g] = 1 / parts[r].IndependentVariance(g);
        var total = new double[n];
        var count = new int[n];
        for (int g = 0; g < n; g++)
            for (int r = 0; r < runs.Count; r++)
                if (parts[r].Covers[g]) { total[g] += weight[r, g]; count[g]++; }

        // Combination matrices: mean = Sum_r M_r v_r with M_r = diag(w_r / Sum w) W_r.
        var value = new double[n];
        var random = new double[n, n];
        var rows = new List<SystematicRow>();
        var shared = new Dictionary<(string, int), double[]>();
        for (int r = 0; r < runs.Count; r++)
        {
            var m = Scaled(parts[r].W, g => parts[r].Covers[g] ? weight[r, g] / total[g] : 0);
            double[] v = Matrices.Multiply(m, runs[r].Value);
            for (int g = 0; g < n; g++) value[g] += v[g];
            random = Matrices.Add(random, Matrices.Propagate(m, runs[r].RandomCovariance));
            foreach (double[] row in InterpolationRows(parts[r].Interpolation))
                rows.Add(new SystematicRow("interpolation", runs[r].Run, row.Select((x, g) => parts[r].Covers[g] ? x * weight[r, g] / total[g] : 0).ToArray()));
            foreach (SystematicSource s in runs[r].Systematics)
                for (int k = 0; k < s.Contributions.Length; k++)
                {
                    double[] moved = Matrices.Multiply(m, s.Contributions[k]);
                    if (!s.SharedAcrossRuns) { rows.Add(new SystematicRow(s.Name, runs[r].Run, moved)); continue; }
                    if (!shared.TryGetValue((s.Name, k), out double[]? sum)) shared[(s.Name, k)] = sum = new double[n];
                    for (int g = 0; g < n; g++) sum[g] += moved[g];
                }
        }
        rows.AddRange(shared.Select(kv => new SystematicRow(kv.Key.Item1, null, kv.Value)));

        // Scatter between runs: Birge ratio per point and Student's t interval.
        var birge = new double[n];
        var half = new double[n];
        double scatterSum = 0;
        int scatterDof = 0;
        for (int g = 0; g < n; g++)
        {
            double internalSigma = Math.Sqrt(1 / total[g]);
            half[g] = 1.959963984540054 * internalSigma;
            birge[g] = double.NaN;
            if (count[g] < 2) continue;
            double chi = 0;
            for (int r = 0; r < runs.Count; r++)
                if (parts[r].Covers[g]) chi += weight[r, g] * Math.Pow(parts[r].Values[g] - value[g], 2);
            birge[g] = Math.Sqrt(chi / (count[g] - 1));
            scatterSum += chi;
            scatterDof += count[g] - 1;
            // Student's t with n − 1 degrees of freedom on the observed scatter of the mean (sigma_int times Birge ratio).
            half[g] = Math.Max(half[g], Statistics.StudentT(0.95, count[g] - 1) * internalSigma * birge[g]);
        }

        var consistency = Consistencies(runs, parts, weight, grid);
        return new CombinedNight(grid, value, random, rows, count, birge, half, consistency, frequency)
        {
            OverallBirgeRatio = scatterDof > 0 ? Math.Sqrt(scatterSum / scatterDof) : double.NaN,
        };
    }

    /// <summary>The common grid: the runs' own separations when they all share them (always for a single run), else as many points as the longest run, evenly in ln a over the union of the ranges.</summary>
    public static double[] Grid(IReadOnlyList<RunResult> runs)
    {
        double[] first = runs[0].Separation;
        bool same = runs.All(r => r.Separation.Length == first.Length && r.Separation.Zip(first).All(x => Math.Abs(x.First - x.Second) <= 1e-9 * x.Second));
        if (same) return (double[])first.Clone();
        double lo = runs.Min(r => r.Separation[0]), hi = runs.Max(r => r.Separation[^1]);
        int n = runs.Max(r => r.Separation.Length);
        if (n < 2 || !(hi > lo)) return [lo];
        return Enumerable.Range(0, n).Select(i => i == n - 1 ? hi : lo * Math.Pow(hi / lo, (double)i / (n - 1))).ToArray();
    }

    /// <summary>A run on the grid: W (grid x points), coverage, interpolated values and independent covariance.</summary>
    private sealed class OnGrid(double[,] w, bool[] covers, double[] values, double[,] independent, double[] interpolation)
    {
        public double[] Interpolation { get; } = interpolation;
        public double[,] W { get; } = w;
        public bool[] Covers { get; } = covers;
        public double[] Values { get; } = values;
        public double[,] Independent { get; } = independent;
        public double IndependentVariance(int g) => Independent[g, g];
    }

    private static OnGrid Interpolate(RunResult run, double[] grid, CurveShape shape)
    {
        double[] a = run.Separation;
        int n = grid.Length, p = a.Length;
        var w = new double[n, p];
        var covers = new bool[n];
        var interpolation = new double[n];
        double[] ratio = Enumerable.Range(0, p).Select(i => run.Value[i] / shape.Value(a[i])).ToArray();
        for (int g = 0; g < n; g++)
        {
            double x = grid[g];
            double tolerance = 1e-9 * x;
            if (x < a[0] - tolerance || x > a[^1] + tolerance) continue;
            covers[g] = true;
            int exact = Array.FindIndex(a, s => Math.Abs(s - x) <= tolerance);
            if (exact >= 0) { w[g, exact] = 1; continue; }
            // v(x) = S(x) q(x), q = v/S interpolated by a Lagrange polynomial in ln a through up to four neighbours
            // (two on each side); the same with the farthest of them left out gives the interpolation error estimate.
            int hi = Array.FindIndex(a, s => s > x), lo = hi - 1;
            int first = Math.Max(0, lo - 1), last = Math.Min(p - 1, hi + 1);
            int[] stencil = Enumerable.Range(first, last - first + 1).ToArray();
            double sx = shape.Value(x);
            double[] full = Lagrange(stencil.Select(i => Math.Log(a[i])).ToArray(), Math.Log(x));
            for (int k = 0; k < stencil.Length; k++) w[g, stencil[k]] = full[k] * sx / shape.Value(a[stencil[k]]);
            if (stencil.Length < 3) continue;
            int drop = Math.Abs(Math.Log(a[stencil[0]] / x)) > Math.Abs(Math.Log(a[stencil[^1]] / x)) ? 0 : stencil.Length - 1;
            int[] lower = stencil.Where((_, k) => k != drop).ToArray();
            double[] reduced = Lagrange(lower.Select(i => Math.Log(a[i])).ToArray(), Math.Log(x));
            double difference = stencil.Select((i, k) => full[k] * ratio[i]).Sum() - lower.Select((i, k) => reduced[k] * ratio[i]).Sum();
            interpolation[g] = Math.Abs(difference * sx);
        }
        double[] values = Matrices.Multiply(w, run.Value);
        double[,] independent = Matrices.Propagate(w, run.RandomCovariance);
        var own = run.Systematics.Where(s => !s.SharedAcrossRuns).SelectMany(s => s.Contributions.Select(row => Matrices.Multiply(w, row)))
            .Concat(InterpolationRows(interpolation));
        independent = Matrices.Add(independent, Matrices.OuterSum(own, n));
        return new OnGrid(w, covers, values, independent, interpolation);
    }

    // One independent row per interpolated point (the errors of neighbouring interpolations are taken as independent).
    private static IEnumerable<double[]> InterpolationRows(double[] sigma) => sigma.Select((s, g) => (s, g)).Where(x => x.s > 0).Select(x =>
    {
        var row = new double[sigma.Length];
        row[x.g] = x.s;
        return row;
    });

    // Lagrange basis weights at u for the nodes.
    private static double[] Lagrange(double[] nodes, double u)
    {
        var weight = new double[nodes.Length];
        for (int k = 0; k < nodes.Length; k++)
        {
            double l = 1;
            for (int m = 0; m < nodes.Length; m++)
                if (m != k) l *= (u - nodes[m]) / (nodes[k] - nodes[m]);
            weight[k] = l;
        }
        return weight;
    }

    // Each run against the mean of the others. One outlier would make every other run look discrepant too, so the
    // worst run below the threshold is flagged and left out of the others' mean, and the test is repeated on the rest.
    private static RunConsistency[] Consistencies(IReadOnlyList<RunResult> runs, OnGrid[] parts, double[,] weight, double[] grid)
    {
        var result = new RunConsistency[runs.Count];
        if (runs.Count < 2) return [];
        var trusted = new HashSet<int>(Enumerable.Range(0, runs.Count));
        while (true)
        {
            var tests = trusted.Select(r => (r, Test: Consistency(r, trusted, runs, parts, weight, grid))).ToArray();
            var worst = tests.Where(t => t.Test.Flagged).OrderBy(t => t.Test.PValue).FirstOrDefault();
            if (worst.Test is null || trusted.Count <= 2 && tests.Count(t => t.Test.Flagged) > 1)
            {
                // Nothing flagged, or two runs that disagree with each other: both carry the flag (neither can be singled out).
                foreach (var t in tests) result[t.r] = t.Test;
                return result;
            }
            result[worst.r] = worst.Test;
            trusted.Remove(worst.r);
            if (trusted.Count < 2)
            {
                foreach (int r in trusted) result[r] = new RunConsistency(runs[r].Run, 0, 0, double.NaN, false, null);
                return result;
            }
        }
    }

    private static RunConsistency Consistency(int r, HashSet<int> among, IReadOnlyList<RunResult> runs, OnGrid[] parts, double[,] weight, double[] grid)
    {
        // Points this run shares with at least one other run; the others' mean there with their own weights.
        var others = among.Where(o => o != r).ToArray();
        var points = Enumerable.Range(0, grid.Length)
            .Where(g => parts[r].Covers[g] && others.Any(o => parts[o].Covers[g])).ToArray();
        if (points.Length == 0) return new RunConsistency(runs[r].Run, 0, 0, double.NaN, false, null);
        int k = points.Length;
        var delta = new double[k];
        var cov = new double[k, k];
        for (int i = 0; i < k; i++)
            for (int j = 0; j < k; j++) cov[i, j] = parts[r].Independent[points[i], points[j]];
        foreach (int o in others)
        {
            var factor = new double[k];
            for (int i = 0; i < k; i++)
            {
                int g = points[i];
                double sum = others.Where(q => parts[q].Covers[g]).Sum(q => weight[q, g]);
                factor[i] = parts[o].Covers[g] ? weight[o, g] / sum : 0;
            }
            for (int i = 0; i < k; i++)
            {
                delta[i] -= factor[i] * parts[o].Values[points[i]];
                for (int j = 0; j < k; j++) cov[i, j] += factor[i] * factor[j] * parts[o].Independent[points[i], points[j]];
            }
        }
        for (int i = 0; i < k; i++) delta[i] += parts[r].Values[points[i]];
        // Directions the covariance does not resolve (rounding, nearly noise-free data) are not counted.
        (double[,] inverse, int rank) = Matrices.InverseOrPseudoInverse(cov);
        double chi = Matrices.Bilinear(delta, inverse, delta);
        double p = Statistics.ChiSquareSurvival(chi, rank);
        if (p >= FlagProbability) return new RunConsistency(runs[r].Run, k, chi, p, false, null);
        int worst = Enumerable.Range(0, k).MaxBy(i => Math.Abs(delta[i]) / Math.Sqrt(cov[i, i]));
        string reason = FormattableString.Invariant(
            $"{runs[r].Run} disagrees with the other runs: chi2 = {chi:F1} for {k} points{(rank < k ? $" ({rank} resolved)" : "")} (p = {p:G2}); the largest difference is {delta[worst] / Math.Sqrt(cov[worst, worst]):F1} sigma at {grid[points[worst]] * 1e9:F1} nm");
        return new RunConsistency(runs[r].Run, k, chi, p, true, reason);
    }

    private static double[,] Scaled(double[,] w, Func<int, double> rowFactor)
    {
        var m = (double[,])w.Clone();
        for (int g = 0; g < m.GetLength(0); g++)
        {
            double f = rowFactor(g);
            for (int i = 0; i < m.GetLength(1); i++) m[g, i] *= f;
        }
        return m;
    }
}
