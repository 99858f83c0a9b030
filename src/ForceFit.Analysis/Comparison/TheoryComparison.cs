using System.Globalization;
using ForceFit.Analysis.Reduction;
using ForceFit.Analysis.Theory;
using ForceFit.Fitting;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Analysis.Comparison;

/// <summary>Settings of the comparison.</summary>
/// <param name="Draws">Monte Carlo draws for the bands (at least 1000 for a report).</param>
/// <param name="Seed">Seed of the draws (the same seed gives the same bands).</param>
public sealed record ComparisonOptions(int Draws = 1000, int Seed = 20261201);

/// <summary>A fitted correction with its uncertainty.</summary>
/// <param name="Value">Estimate.</param>
/// <param name="Sigma">Standard uncertainty.</param>
/// <param name="ChiSquare">Chi-square at the estimate.</param>
public sealed record FittedValue(double Value, double Sigma, double ChiSquare);

/// <summary>One theory against the night.</summary>
/// <param name="Theory">The [[theory]] name.</param>
/// <param name="Value">Prediction at the night's separations with the stated inputs: force gradient (N/m) or force (N).</param>
/// <param name="LinearSigma">Standard uncertainty of the prediction by linearisation (theory inputs and the night's systematic errors).</param>
/// <param name="BandLow">Lower edge of the 95% Monte Carlo band.</param>
/// <param name="BandHigh">Upper edge of the 95% Monte Carlo band.</param>
/// <param name="MonteCarloSigma">Standard deviation of the Monte Carlo draws.</param>
/// <param name="BandDisagreement">Separations (m) where the linearised and Monte Carlo 95% edges differ by more than 10% of the band's width.</param>
/// <param name="ChiSquare">Chi-square of data − prediction with the full covariance (random + systematic + theory inputs).</param>
/// <param name="DegreesOfFreedom">Number of points (nothing is fitted).</param>
/// <param name="PValue">P(chi2 ≥ observed).</param>
/// <param name="RandomChiSquare">Chi-square with the random covariance only.</param>
/// <param name="RandomPValue">Its p-value.</param>
/// <param name="BeyondPfa">The beyond-PFA coefficient theta fitted to the data with this theory (the stated theta's uncertainty left out), or null.</param>
/// <param name="GapShift">The shift of every separation preferred by the Casimir data with this theory (a_true = a + shift; z0 from the Casimir data = electrostatic z0 + shift), or null.</param>
/// <param name="Sources">Linearised standard uncertainty per point of each input (theory and experiment), by name.</param>
public sealed record TheoryResult(string Theory, double[] Value, double[] LinearSigma, double[] BandLow, double[] BandHigh, double[] MonteCarloSigma,
    double[] BandDisagreement, double ChiSquare, int DegreesOfFreedom, double PValue, double RandomChiSquare, double RandomPValue,
    FittedValue? BeyondPfa, FittedValue? GapShift, IReadOnlyList<(string Name, double[] Sigma)> Sources)
{
    /// <summary>True when p is below 0.05.</summary>
    public bool Excluded95 => PValue < 0.05;

    /// <summary>True when p is below 0.0027 (three standard deviations of a normal distribution).</summary>
    public bool Excluded997 => PValue < 0.0027;

    /// <summary>The verdict in careful words.</summary>
    public string Verdict => PValue switch
    {
        < 0.0027 => "disagrees with the data at 99.7% confidence (under the stated assumptions)",
        < 0.05 => "disagrees with the data at 95% but not at 99.7% confidence (under the stated assumptions)",
        _ => "consistent with the data at 95% confidence",
    };

    /// <summary>The gap-shift pull shift/sigma: how far the Casimir data's z0 sits from the electrostatic one.</summary>
    public double GapShiftPull => GapShift is { } g ? g.Value / g.Sigma : double.NaN;
}

/// <summary>
/// Compares the night with every [[theory]] (issue: comparison with theory). The prediction's uncertainty combines the
/// theory inputs (R, T, plasma frequencies, dampings, roughness, theta) with the night's systematic errors (z0 and k
/// of each run with their correlation, the piezo scale, R, A, given constants) moved to the theory side: a draw is
/// F_th(inputs + g sigma) − Sum_r g_r c_r, where c_r is how the reduced points move for one sigma of source r. The
/// sphere radius enters both (the same sphere): one draw g_R moves the theory and the experimental radius row together.
/// Chi-square: (data − prediction)^T C^−1 (data − prediction), C = random + linearised systematic (correlated between
/// points), dof = number of points, p from the chi-square distribution.
/// </summary>
public static class TheoryComparison
{
    /// <summary>Compares every theory of the settings with the combined night.</summary>
    public static IReadOnlyList<TheoryResult> Compare(CombinedNight night, TheoryInputs inputs, ComparisonOptions? options = null, CancellationToken cancel = default,
        IProgress<int>? drawsDone = null)
    {
        options ??= new ComparisonOptions();
        if (inputs.Theories.Count == 0 || night.Value.Length == 0) return [];
        double[] a = night.Separation;
        int n = a.Length, theories = inputs.Theories.Count;
        IReadOnlyList<TheoryParameter> parameters = TheoryParameters.Of(inputs);
        var smooth = new RatioInterpolation(inputs, a, night.Frequency);
        double[][] nominal = smooth.Nominal;

        // Linearisation: central differences over ±1 sigma of each theory input.
        var theoryRows = new double[parameters.Count][][]; // [parameter][theory][point]
        for (int p = 0; p < parameters.Count; p++)
        {
            cancel.ThrowIfCancellationRequested();
            double[][] up = Predict(parameters[p].Shift(inputs, parameters[p].Sigma), a, night.Frequency);
            double[][] down = Predict(parameters[p].Shift(inputs, -parameters[p].Sigma), a, night.Frequency);
            theoryRows[p] = Enumerable.Range(0, theories).Select(t => Enumerable.Range(0, n).Select(i => (up[t][i] - down[t][i]) / 2).ToArray()).ToArray();
        }

        // Experimental rows: the radius rows pair with the theory's radius (one draw), the rest are independent.
        int radiusIndex = parameters.ToList().FindIndex(p => p.Name == TheoryParameters.Radius);
        var experimentalRadius = night.Systematics.Where(r => r.Source == TheoryParameters.Radius && r.Run is null).Select(r => r.Values).ToArray();
        var experimental = night.Systematics.Where(r => !(r.Source == TheoryParameters.Radius && r.Run is null && radiusIndex >= 0)).ToArray();
        double[] radiusRow = experimentalRadius.Length > 0 ? experimentalRadius[0] : new double[n];

        // Monte Carlo draws: each draw one normal deviate per theory input and per experimental row.
        int draws = Math.Max(options.Draws, 0);
        var drawn = new double[draws][][];
        int finished = 0;
        Parallel.For(0, draws, new ParallelOptions { CancellationToken = cancel }, d =>
        {
            var random = new Random(unchecked(options.Seed * 7919 + d));
            double[] g = parameters.Select(_ => Normal(random)).ToArray();
            double[] ge = experimental.Select(_ => Normal(random)).ToArray();
            TheoryInputs shifted = inputs;
            for (int p = 0; p < parameters.Count; p++) shifted = parameters[p].Shift(shifted, g[p] * parameters[p].Sigma);
            double[][] prediction = smooth.Predict(shifted);
            for (int t = 0; t < theories; t++)
                for (int i = 0; i < n; i++)
                {
                    double move = 0;
                    for (int r = 0; r < experimental.Length; r++) move += ge[r] * experimental[r].Values[i];
                    if (radiusIndex >= 0) move += g[radiusIndex] * radiusRow[i];
                    prediction[t][i] -= move;
                }
            drawn[d] = prediction;
            int done = Interlocked.Increment(ref finished);
            if (done % 50 == 0 || done == draws) drawsDone?.Report(done);
        });

        double[,] randomCovariance = night.RandomCovariance;
        var results = new TheoryResult[theories];
        for (int t = 0; t < theories; t++)
        {
            cancel.ThrowIfCancellationRequested();
            // Linearised rows of this theory: theory inputs (radius combined with the experimental radius row), experiment.
            var sources = new List<(string Name, double[] Row)>();
            for (int p = 0; p < parameters.Count; p++)
            {
                double[] row = theoryRows[p][t];
                if (p == radiusIndex) row = row.Zip(radiusRow, (x, y) => x - y).ToArray();
                sources.Add((parameters[p].Name, row));
            }
            foreach (SystematicRow r in experimental) sources.Add((r.Run is null ? r.Source : $"{r.Source} ({r.Run})", r.Values.Select(v => -v).ToArray()));
            double[,] band = Matrices.OuterSum(sources.Select(s => s.Row), n);
            double[] linear = Enumerable.Range(0, n).Select(i => Math.Sqrt(band[i, i])).ToArray();

            double[] residual = night.Value.Zip(nominal[t], (v, f) => v - f).ToArray();
            double[,] total = Matrices.Add(randomCovariance, band);
            // Directions the covariance does not resolve (rounding, nearly noise-free data) are not counted.
            (double[,] totalInverse, int rank) = Matrices.InverseOrPseudoInverse(total);
            (double[,] randomInverse, int randomRank) = Matrices.InverseOrPseudoInverse(randomCovariance);
            double chi = Matrices.Bilinear(residual, totalInverse, residual);
            double chiRandom = Matrices.Bilinear(residual, randomInverse, residual);

            (double[] low, double[] high, double[] mcSigma) = Percentiles(drawn, t, n);
            var disagreement = new List<double>();
            for (int i = 0; i < n && draws > 0; i++)
            {
                double width = 2 * 1.959963984540054 * linear[i];
                double lowLinear = nominal[t][i] - width / 2, highLinear = nominal[t][i] + width / 2;
                if (Math.Abs(low[i] - lowLinear) > 0.1 * width || Math.Abs(high[i] - highLinear) > 0.1 * width) disagreement.Add(a[i]);
            }

            FittedValue? theta = FitBeyondPfa(inputs, parameters, sources, randomCovariance, residual, nominal[t], a, n);
            FittedValue? shift = FitGapShift(inputs, t, night, total, a);
            var named = sources.GroupBy(s => s.Name).Select(g => (g.Key, Enumerable.Range(0, n).Select(i => Math.Sqrt(g.Sum(s => s.Row[i] * s.Row[i]))).ToArray())).ToArray();
            results[t] = new TheoryResult(inputs.Theories[t].Name, nominal[t], linear, low, high, mcSigma, disagreement.ToArray(),
                chi, rank, Statistics.ChiSquareSurvival(chi, rank), chiRandom, Statistics.ChiSquareSurvival(chiRandom, randomRank), theta, shift, named);
        }
        return results;
    }

    /// <summary>Every theory's prediction (gradient or force) at the separations, in theory order.</summary>
    public static double[][] Predict(TheoryInputs inputs, double[] a, bool frequency) => Predict(TheoryModels.Prepare(inputs), a, frequency);

    /// <summary>Every prepared theory's prediction (gradient or force) at the separations, in theory order.</summary>
    public static double[][] Predict(IReadOnlyList<PreparedTheory> prepared, double[] a, bool frequency)
    {
        IReadOnlyList<TheoryRow> rows = TheoryModels.Evaluate(prepared, a);
        return Enumerable.Range(0, prepared.Count)
            .Select(t => Enumerable.Range(0, a.Length).Select(i => frequency ? rows[t * a.Length + i].ForceGradient : rows[t * a.Length + i].Force).ToArray())
            .ToArray();
    }

    /// <summary>
    /// A draw's prediction from the theory at a few separations only: the ratio of the drawn to the nominal
    /// prediction is a slowly varying function of ln a (the inputs change the curve by a percent or less, smoothly), so
    /// it is computed at <see cref="Nodes"/> Chebyshev nodes in ln a and carried to every separation by the
    /// interpolating polynomial in barycentric form (J.-P. Berrut and L. N. Trefethen, SIAM Review 46, 501 (2004),
    /// first-kind Chebyshev points); the nominal prediction at every separation is exact. With 60 separations this is
    /// four times fewer Lifshitz evaluations per draw; the interpolation error is far below the band (checked in the tests).
    /// </summary>
    public sealed class RatioInterpolation
    {
        /// <summary>Separations at which every draw is computed exactly.</summary>
        public const int Nodes = 10;

        private readonly double[] _a;
        private readonly bool _frequency;
        private readonly double[] _nodes;
        private readonly double[][] _nominalAtNodes;
        private readonly double[] _weights;

        /// <summary>Every theory's nominal prediction at the separations (exact).</summary>
        public double[][] Nominal { get; }

        /// <summary>Prepares the nominal prediction at the separations and at the nodes.</summary>
        public RatioInterpolation(TheoryInputs nominal, double[] a, bool frequency)
        {
            _a = a;
            _frequency = frequency;
            double lo = Math.Log(a.Min()), hi = Math.Log(a.Max());
            _nodes = a.Length <= Nodes || !(hi > lo) ? a
                : Enumerable.Range(0, Nodes).Select(k => Math.Exp((lo + hi) / 2 + (hi - lo) / 2 * Math.Cos((2 * k + 1) * Math.PI / (2 * Nodes)))).ToArray();
            _weights = Enumerable.Range(0, _nodes.Length).Select(k => (k % 2 == 0 ? 1 : -1) * Math.Sin((2 * k + 1) * Math.PI / (2 * Nodes))).ToArray();
            IReadOnlyList<PreparedTheory> prepared = TheoryModels.Prepare(nominal);
            Nominal = TheoryComparison.Predict(prepared, a, frequency);
            _nominalAtNodes = ReferenceEquals(_nodes, a) ? Nominal : TheoryComparison.Predict(prepared, _nodes, frequency);
        }

        /// <summary>Every theory's prediction with the given inputs at the separations.</summary>
        public double[][] Predict(TheoryInputs inputs)
        {
            double[][] drawn = TheoryComparison.Predict(inputs, _nodes, _frequency);
            if (ReferenceEquals(_nodes, _a)) return drawn;
            double[] u = _nodes.Select(x => Math.Log(x)).ToArray();
            var result = new double[drawn.Length][];
            for (int t = 0; t < drawn.Length; t++)
            {
                if (_nominalAtNodes[t].Any(v => v == 0) || Nominal[t].Any(v => v == 0)) { result[t] = TheoryComparison.Predict(inputs, _a, _frequency)[t]; continue; }
                double[] ratio = drawn[t].Zip(_nominalAtNodes[t], (d, n) => d / n).ToArray();
                result[t] = _a.Select((x, i) => Nominal[t][i] * Barycentric(u, _weights, ratio, Math.Log(x))).ToArray();
            }
            return result;
        }
    }

    // p(x) = Sum w_k f_k / (x − x_k) / Sum w_k / (x − x_k), exact at the nodes.
    private static double Barycentric(double[] nodes, double[] weights, double[] values, double x)
    {
        double numerator = 0, denominator = 0;
        for (int k = 0; k < nodes.Length; k++)
        {
            double d = x - nodes[k];
            if (d == 0) return values[k];
            numerator += weights[k] / d * values[k];
            denominator += weights[k] / d;
        }
        return numerator / denominator;
    }

    // The beyond-PFA correction is linear in theta: F(theta) = F(theta0) + (theta − theta0) F_0 (a/R) / (1 + theta0 a/R)
    // (physics.md: F' = −2 pi R P (1 + theta a/R)); generalised least squares with every other uncertainty in C.
    private static FittedValue? FitBeyondPfa(TheoryInputs inputs, IReadOnlyList<TheoryParameter> parameters, List<(string Name, double[] Row)> sources,
        double[,] random, double[] residual, double[] prediction, double[] a, int n)
    {
        if (n < 2) return null;
        double theta0 = inputs.Surfaces.PfaCorrection.Value, radius = inputs.Sphere.Radius.Value;
        string thetaName = parameters.FirstOrDefault(p => p.Name == "beyond-PFA coefficient")?.Name ?? "";
        double[,] c = Matrices.Add(random, Matrices.OuterSum(sources.Where(s => s.Name != thetaName).Select(s => s.Row), n));
        double[] g = Enumerable.Range(0, n).Select(i => prediction[i] * (a[i] / radius) / (1 + theta0 * a[i] / radius)).ToArray();
        double[,] inverse = Matrices.InverseOrPseudoInverse(c).Inverse;
        double gg = Matrices.Bilinear(g, inverse, g), gr = Matrices.Bilinear(g, inverse, residual);
        double step = gr / gg;
        double[] after = residual.Select((r, i) => r - step * g[i]).ToArray();
        return new FittedValue(theta0 + step, Math.Sqrt(1 / gg), Matrices.Bilinear(after, inverse, after));
    }

    // z0 from the Casimir data alone: the common shift delta of the separations, F(a + delta), by Gauss–Newton with
    // the theory's slope from central differences (0.2 nm), the full covariance in the weights.
    private static FittedValue? FitGapShift(TheoryInputs inputs, int t, CombinedNight night, double[,] covariance, double[] a)
    {
        int n = a.Length;
        if (n < 2) return null;
        double[,] inverse = Matrices.InverseOrPseudoInverse(covariance).Inverse;
        PreparedTheory[] theory = [TheoryModels.Prepare(inputs)[t]];
        double delta = 0, sigma = double.NaN, chi = double.NaN;
        const double h = 0.2e-9;
        for (int iteration = 0; iteration < 4; iteration++)
        {
            double[] at = a.Select(x => x + delta).ToArray();
            if (at.Any(x => x <= h)) return null;
            double[] f = Predict(theory, at, night.Frequency)[0];
            double[] up = Predict(theory, at.Select(x => x + h).ToArray(), night.Frequency)[0];
            double[] down = Predict(theory, at.Select(x => x - h).ToArray(), night.Frequency)[0];
            double[] slope = up.Zip(down, (u, d) => (u - d) / (2 * h)).ToArray();
            double[] residual = night.Value.Zip(f, (v, x) => v - x).ToArray();
            double ss = Matrices.Bilinear(slope, inverse, slope);
            double step = Matrices.Bilinear(slope, inverse, residual) / ss;
            delta += step;
            sigma = Math.Sqrt(1 / ss);
            double[] after = residual.Select((r, i) => r - step * slope[i]).ToArray();
            chi = Matrices.Bilinear(after, inverse, after);
            if (Math.Abs(step) < 1e-3 * sigma) break;
        }
        return new FittedValue(delta, sigma, chi);
    }

    private static (double[] Low, double[] High, double[] Sigma) Percentiles(double[][][] drawn, int t, int n)
    {
        var low = new double[n];
        var high = new double[n];
        var sigma = new double[n];
        if (drawn.Length == 0) { Array.Fill(low, double.NaN); Array.Fill(high, double.NaN); Array.Fill(sigma, double.NaN); return (low, high, sigma); }
        var column = new double[drawn.Length];
        for (int i = 0; i < n; i++)
        {
            for (int d = 0; d < drawn.Length; d++) column[d] = drawn[d][t][i];
            Array.Sort(column);
            low[i] = Quantile(column, 0.025);
            high[i] = Quantile(column, 0.975);
            double mean = column.Average();
            sigma[i] = Math.Sqrt(column.Sum(x => (x - mean) * (x - mean)) / Math.Max(1, column.Length - 1));
        }
        return (low, high, sigma);
    }

    // Linear interpolation between order statistics (the "type 7" definition, Hyndman & Fan, Am. Stat. 50, 361 (1996)).
    private static double Quantile(double[] sorted, double q)
    {
        double h = (sorted.Length - 1) * q;
        int lo = (int)Math.Floor(h);
        int hi = Math.Min(lo + 1, sorted.Length - 1);
        return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
    }

    // Standard normal deviate (Box–Muller).
    private static double Normal(Random random)
    {
        double u1 = 1 - random.NextDouble(), u2 = random.NextDouble();
        return Math.Sqrt(-2 * Math.Log(u1)) * Math.Cos(2 * Math.PI * u2);
    }

    /// <summary>A short line for the report: chi2/dof, p and the verdict.</summary>
    public static string Describe(TheoryResult r) => string.Create(CultureInfo.InvariantCulture,
        $"{r.Theory}: chi2 = {r.ChiSquare:F1} for {r.DegreesOfFreedom} points, p = {r.PValue:G3}: {r.Verdict}");
}
