namespace ForceFit.Analysis.Reduction;

/// <summary>One measurement of the free signal (f0 or S_free) from a force-free reference step.</summary>
/// <param name="Time">Mean time of the step's kept samples (s).</param>
/// <param name="Value">The free signal, after any correction for the residual electrostatic force at the reference gap.</param>
/// <param name="Sigma">Its standard uncertainty.</param>
public sealed record FreeSignalPoint(double Time, double Value, double Sigma);

/// <summary>
/// The free signal versus time: f0(t) in frequency mode, S_free(t) in deflection mode. Between reference steps it is
/// interpolated linearly in time; before the first and after the last it is held at the nearest one. Its error at a
/// time t is a linear combination of the reference errors (shared by every step that uses them) plus, when the free
/// signal wanders as a random walk of diffusion D^2 (per second, estimated from the references), the Brownian-bridge variance
/// D^2 (t − t_a)(t_b − t)/(t_b − t_a) between references t_a and t_b, or D^2 |t − t_ref| outside them
/// (the conditional variance of a Wiener process given its values at the ends).
/// </summary>
public sealed class FreeSignalTrack
{
    private readonly FreeSignalPoint[] _points;

    private FreeSignalTrack(FreeSignalPoint[] points, double diffusion, bool given)
    {
        _points = points;
        Diffusion = diffusion;
        IsGiven = given;
    }

    /// <summary>The reference points in time order.</summary>
    public IReadOnlyList<FreeSignalPoint> Points => _points;

    /// <summary>Estimated random-walk diffusion D^2 (signal^2 per second); 0 when none is seen.</summary>
    public double Diffusion { get; }

    /// <summary>True when the value came from the run file (one value with one shared uncertainty).</summary>
    public bool IsGiven { get; }

    /// <summary>A constant value stated by the user.</summary>
    public static FreeSignalTrack Given(double value, double sigma) => new([new FreeSignalPoint(0, value, sigma)], 0, true);

    /// <summary>
    /// The track through reference points, with the random walk's diffusion D^2 from the successive differences
    /// d_j = y_(j+1) − y_j of the references (see <see cref="EstimateDiffusion"/>).
    /// </summary>
    public static FreeSignalTrack FromReferences(IReadOnlyList<FreeSignalPoint> references)
    {
        if (references.Count == 0) throw new ArgumentException("no reference points", nameof(references));
        FreeSignalPoint[] points = references.OrderBy(p => p.Time).ToArray();
        return new FreeSignalTrack(points, EstimateDiffusion(points), false);
    }

    /// <summary>
    /// The diffusion D^2 of a random walk seen through references with errors sigma_j, about a constant drift rate r.
    /// The differences are exactly d_j = r dt_j + (walk increment, variance D^2 dt_j) + e_(j+1) − e_j: a tridiagonal
    /// covariance (diagonal D^2 dt_j + sigma_j^2 + sigma_(j+1)^2, neighbours −sigma_(j+1)^2). Their restricted
    /// likelihood L(D^2) with r profiled out (REML; H. D. Patterson, R. Thompson, Biometrika 58, 545 (1971)) is
    /// evaluated on a grid, and D^2 is its posterior mean under the prior 1/(D^2 + D_s^2): scale-free (Jeffreys) above
    /// the level D_s^2 = min_j (sigma_j^2 + sigma_(j+1)^2)/dt_j at which the walk starts to show in the most telling
    /// difference, flat below it, where no difference can see it (our choice). The mean, not the most likely value, is
    /// what the errors need: a point estimate from nu effective increments is D^2 chi^2_nu / nu, and
    /// E[nu / chi^2_nu] = nu / (nu − 2), so errors divided by sigmas built on it have an rms above 1 (1.2 for nu = 7);
    /// the posterior mean is about S/(nu − 2) instead of S/nu.
    /// With fewer than 3 effective increments the mean is not determined, and the moment estimate
    /// sum (d_j − r dt_j)^2 − sigma_j^2 − sigma_(j+1)^2 over sum dt_j is used instead; likewise without reference errors.
    /// </summary>
    public static double EstimateDiffusion(IReadOnlyList<FreeSignalPoint> points)
    {
        int n = points.Count - 1;
        if (n < 2) return 0;
        var dt = new double[n];
        var d = new double[n];
        var noise = new double[n];
        double[] variance = points.Select(p => p.Sigma * p.Sigma).ToArray();
        for (int j = 0; j < n; j++)
        {
            dt[j] = points[j + 1].Time - points[j].Time;
            d[j] = points[j + 1].Value - points[j].Value;
            noise[j] = variance[j] + variance[j + 1];
        }
        double moments = MomentDiffusion(points, dt, d, noise);
        if (dt.Any(x => !(x > 0)) || noise.Any(x => !(x > 0))) return moments;
        double scale = Enumerable.Range(0, n).Min(j => noise[j] / dt[j]);
        // ln D^2 in steps of 0.25 from 12 e-folds below that level to 12 above it or above the moment estimate
        // (posterior mass beyond is negligible unless the differences cannot tell, which the effective count below catches).
        double low = scale * Math.Exp(-12), high = Math.Max(scale, moments) * Math.Exp(12);
        int grid = (int)Math.Ceiling(Math.Log(high / low) / 0.25) + 1;
        var logLikelihood = new double[grid];
        var values = new double[grid];
        for (int g = 0; g < grid; g++)
        {
            values[g] = low * Math.Exp(Math.Log(high / low) * g / (grid - 1));
            logLikelihood[g] = RestrictedLogLikelihood(values[g], dt, d, variance);
        }
        double max = logLikelihood.Max();
        double sum = 0, weighted = 0;
        for (int g = 0; g < grid; g++)
        {
            // Uniform in ln D^2: dD^2 = D^2 du; the prior 1/(D^2 + D_s^2).
            double w = Math.Exp(logLikelihood[g] - max) * values[g] / (values[g] + scale);
            sum += w;
            weighted += w * values[g];
        }
        double mean = weighted / sum;
        // Effective increments at the mean: sum of (D^2 dt / (D^2 dt + noise))^2 (nu = 2 D^4 I(D^2), diagonal approximation).
        double effective = Enumerable.Range(0, n).Sum(j => Math.Pow(mean * dt[j] / (mean * dt[j] + noise[j]), 2));
        return effective >= 3 ? mean : moments;
    }

    private static double MomentDiffusion(IReadOnlyList<FreeSignalPoint> points, double[] dt, double[] d, double[] noise)
    {
        double totalDt = points[^1].Time - points[0].Time;
        double rate = totalDt > 0 ? (points[^1].Value - points[0].Value) / totalDt : 0;
        double excess = 0;
        for (int j = 0; j < dt.Length; j++) excess += Math.Pow(d[j] - rate * dt[j], 2) - noise[j];
        return totalDt > 0 ? Math.Max(0, excess / totalDt) : 0;
    }

    // REML log-likelihood of the differences for diffusion D2, the rate profiled out: −(1/2)[ln|V| + ln(dt' V^-1 dt) + q],
    // q = d' V^-1 d − (dt' V^-1 d)^2 / (dt' V^-1 dt), by the LDL' factorisation of the tridiagonal V.
    private static double RestrictedLogLikelihood(double d2, double[] dt, double[] d, double[] variance)
    {
        int n = dt.Length;
        double logDet = 0, aa = 0, ab = 0, bb = 0;
        double previousPivot = 0, previousX = 0, previousY = 0;
        for (int j = 0; j < n; j++)
        {
            double sj = variance[j];
            double diagonal = d2 * dt[j] + sj + variance[j + 1];
            // V[j, j−1] = −sigma_j^2: l_j = V[j, j−1] / pivot_(j−1); pivot_j = V[j, j] − l_j^2 pivot_(j−1).
            double l = j == 0 ? 0 : -sj / previousPivot;
            double pivot = diagonal - l * l * previousPivot;
            // Forward substitution of dt and d: z_j = x_j − l_j z_(j−1); the quadratic forms are sum z^2 / pivot.
            double x = dt[j] - l * previousX, y = d[j] - l * previousY;
            logDet += Math.Log(pivot);
            aa += x * x / pivot;
            ab += x * y / pivot;
            bb += y * y / pivot;
            (previousPivot, previousX, previousY) = (pivot, x, y);
        }
        return -0.5 * (logDet + Math.Log(aa) + bb - ab * ab / aa);
    }

    /// <summary>The interpolation: reference indices and weights (i1 = i0 and w1 = 0 outside the references).</summary>
    public (int I0, double W0, int I1, double W1) Weights(double time)
    {
        if (_points.Length == 1 || time <= _points[0].Time) return (0, 1, 0, 0);
        if (time >= _points[^1].Time) return (_points.Length - 1, 1, _points.Length - 1, 0);
        int hi = Array.FindIndex(_points, p => p.Time > time);
        int lo = hi - 1;
        double w = (time - _points[lo].Time) / (_points[hi].Time - _points[lo].Time);
        return (lo, 1 - w, hi, w);
    }

    /// <summary>The free signal at a time.</summary>
    public double At(double time)
    {
        (int i0, double w0, int i1, double w1) = Weights(time);
        return w0 * _points[i0].Value + w1 * _points[i1].Value;
    }

    /// <summary>Covariance of the interpolated free signal's errors at two times (reference errors plus random walk).</summary>
    public double Covariance(double t1, double t2)
    {
        (int a0, double u0, int a1, double u1) = Weights(t1);
        (int b0, double v0, int b1, double v1) = Weights(t2);
        double c = 0;
        void Add(int i, double wi, int j, double wj)
        {
            if (i == j && wi != 0 && wj != 0) c += wi * wj * _points[i].Sigma * _points[i].Sigma;
        }
        Add(a0, u0, b0, v0); Add(a0, u0, b1, v1); Add(a1, u1, b0, v0); Add(a1, u1, b1, v1);
        return c + Diffusion * Bridge(Math.Min(t1, t2), Math.Max(t1, t2));
    }

    // Covariance / D^2 of the random walk's deviation from the track at times s <= t.
    private double Bridge(double s, double t)
    {
        if (Diffusion == 0) return 0;
        double first = _points[0].Time, last = _points[^1].Time;
        if (t <= first) return first - t; // both before the first reference: the walk back from it
        if (s >= last) return s - last;
        if (s < first || t > last) return 0;
        int hi = Array.FindIndex(_points, p => p.Time >= t);
        if (hi <= 0) return 0;
        double ta = _points[hi - 1].Time, tb = _points[hi].Time;
        if (s < ta) return 0; // different intervals: independent
        return (s - ta) * (tb - t) / (tb - ta);
    }
}
