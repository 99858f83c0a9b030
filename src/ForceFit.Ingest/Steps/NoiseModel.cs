namespace ForceFit.Ingest.Steps;

/// <summary>
/// The correlated noise of a run's signal, estimated from the within-step residuals pooled across all steps:
/// the autocovariance C(k) for lags 0..K, corrected for the bias of residuals taken about each step's own mean
/// (E[C_hat(k)] = C(k) − Var(mean), solved by iteration), and a summation window chosen by A. D. Sokal's rule
/// (the smallest W with W >= 6 tau(W); N. Madras, A. D. Sokal, J. Stat. Phys. 50, 109 (1988)). The variance of a
/// step's mean is then (1/n)[C(0) + 2 Sum_{k=1}^{W} (1 − k/n) C(k)] (physics.md: never sigma/sqrt(N) alone).
/// </summary>
public sealed class NoiseModel
{
    private readonly double[] _c;

    private NoiseModel(double[] autocovariance, int window, double tau)
    {
        _c = autocovariance;
        Window = window;
        IntegratedTime = tau;
    }

    /// <summary>True when Sokal's rule was met within the longest lag computed (else the window is that lag, and short).</summary>
    public bool WindowConverged { get; private init; } = true;

    /// <summary>Summation window W (samples).</summary>
    public int Window { get; }

    /// <summary>Integrated autocorrelation time tau = 1 + 2 Sum rho(k) (samples); 1 for white noise.</summary>
    public double IntegratedTime { get; }

    /// <summary>Standard deviation of one sample.</summary>
    public double SampleSigma => Math.Sqrt(_c[0]);

    /// <summary>Lag-1 correlation.</summary>
    public double LagOneCorrelation => _c.Length > 1 ? _c[1] / _c[0] : 0;

    /// <summary>Standard uncertainty of the mean of n consecutive samples.</summary>
    public double SigmaOfMean(int n)
    {
        if (n <= 0) return double.NaN;
        double sum = _c[0];
        int w = Math.Min(Window, n - 1);
        for (int k = 1; k <= w; k++) sum += 2 * (1 - (double)k / n) * _c[k];
        return Math.Sqrt(Math.Max(sum, _c[0] / n) / n);
    }

    /// <summary>Autocovariance C(k) of the noise; zero beyond the summation window.</summary>
    public double Autocovariance(int lag) => lag < 0 ? Autocovariance(-lag) : lag <= Window && lag < _c.Length ? _c[lag] : 0;

    /// <summary>
    /// Covariance of the means of two blocks of consecutive samples, n1 samples then (after <paramref name="gap"/>
    /// samples not in either) n2 samples: (1/(n1 n2)) Sum_i Sum_j C(j − i), the pairs counted by lag.
    /// </summary>
    public double CovarianceOfMeans(int n1, int gap, int n2)
    {
        if (n1 <= 0 || n2 <= 0) return 0;
        double sum = 0;
        // Lag L between sample i of the first block (counted back from its end, a = 1..n1) and sample j of the second
        // (j = 0..n2−1): L = a + gap + j. Pairs with lag L: the a in [max(1, L − gap − n2 + 1), min(n1, L − gap)].
        int last = Math.Min(Window, n1 + gap + n2 - 1);
        for (int lag = gap + 1; lag <= last; lag++)
        {
            int lo = Math.Max(1, lag - gap - n2 + 1), hi = Math.Min(n1, lag - gap);
            if (hi >= lo) sum += (hi - lo + 1) * Autocovariance(lag);
        }
        return sum / ((double)n1 * n2);
    }

    /// <summary>Accumulates per-step lag products; <see cref="Build"/> pools them.</summary>
    public sealed class Accumulator(int maxLag)
    {
        private readonly double[] _sums = new double[maxLag + 1];
        private readonly double[] _pairs = new double[maxLag + 1];
        private readonly List<(int N, int Used)> _steps = [];

        /// <summary>At most this many residuals of a step enter the lag sums (the pooled estimate needs no more).</summary>
        public const int MaxSamplesPerStep = 2048;

        /// <summary>Adds a step's residuals about its mean (the mean of all its <paramref name="stepCount"/> kept samples).</summary>
        public void Add(ReadOnlySpan<double> residuals, int stepCount)
        {
            if (residuals.Length > MaxSamplesPerStep) residuals = residuals[..MaxSamplesPerStep];
            int n = residuals.Length;
            if (n < 2) return;
            int lags = Math.Min(_sums.Length - 1, n - 1);
            for (int k = 0; k <= lags; k++)
            {
                _sums[k] += Dot(residuals[..(n - k)], residuals[k..]);
                _pairs[k] += n - k;
            }
            _steps.Add((stepCount, n));
        }

        private static double Dot(ReadOnlySpan<double> x, ReadOnlySpan<double> y) => ForceFit.Core.Numerics.VectorKernels.Dot(x, y);

        /// <summary>Steps added.</summary>
        public int Steps => _steps.Count;

        /// <summary>Pools the steps into a noise model; null when there are too few samples.</summary>
        public NoiseModel? Build()
        {
            if (_steps.Count == 0 || _pairs[0] < 10) return null;
            int maxLag = 0;
            while (maxLag + 1 < _pairs.Length && _pairs[maxLag + 1] >= 10) maxLag++;
            var raw = new double[maxLag + 1];
            for (int k = 0; k <= maxLag; k++) raw[k] = _sums[k] / _pairs[k];
            if (!(raw[0] > 0)) return new NoiseModel([0.0], 0, 1);
            var c = (double[])raw.Clone();
            int window = maxLag;
            double tau = 1;
            for (int iteration = 0; iteration < 20; iteration++)
            {
                (window, tau) = SokalWindow(c);
                // Mean of Var(step mean) over the pooled residual pairs, for this C.
                var model = new NoiseModel(c, window, tau);
                double weighted = 0, weight = 0;
                // Weighted by the residuals each step contributed; Var(mean) with the step's full size.
                foreach ((int n, int used) in _steps)
                {
                    double v = model.SigmaOfMean(n);
                    weighted += used * v * v;
                    weight += used;
                }
                double bias = weighted / weight;
                var next = raw.Select(r => r + bias).ToArray();
                double change = Math.Abs(next[0] - c[0]) / next[0];
                c = next;
                if (change < 1e-10) break;
            }
            (window, tau) = SokalWindow(c);
            return new NoiseModel(c, window, tau) { WindowConverged = window < c.Length - 1 || window >= 6 * tau };
        }

        private static (int Window, double Tau) SokalWindow(double[] c)
        {
            double tau = 1;
            for (int w = 1; w < c.Length; w++)
            {
                tau += 2 * c[w] / c[0];
                if (w >= 6 * tau) return (w, Math.Max(tau, 1e-3));
            }
            return (c.Length - 1, Math.Max(tau, 1e-3));
        }
    }
}
