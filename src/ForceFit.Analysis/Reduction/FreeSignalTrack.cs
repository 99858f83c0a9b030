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
/// signal wanders as a random walk of diffusion D^2 (per second), the Brownian-bridge variance
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
    /// The track through reference points. The diffusion is estimated from successive differences after removing
    /// the mean drift rate: E[(d_j − r dt_j)^2] = D^2 dt_j + sigma_j^2 + sigma_(j+1)^2, summed over j (method of moments).
    /// </summary>
    public static FreeSignalTrack FromReferences(IReadOnlyList<FreeSignalPoint> references)
    {
        if (references.Count == 0) throw new ArgumentException("no reference points", nameof(references));
        FreeSignalPoint[] points = references.OrderBy(p => p.Time).ToArray();
        double diffusion = 0;
        if (points.Length >= 3)
        {
            double totalDt = points[^1].Time - points[0].Time;
            double rate = totalDt > 0 ? (points[^1].Value - points[0].Value) / totalDt : 0;
            double excess = 0, sumDt = 0;
            for (int j = 0; j + 1 < points.Length; j++)
            {
                double dt = points[j + 1].Time - points[j].Time;
                double d = points[j + 1].Value - points[j].Value - rate * dt;
                excess += d * d - points[j].Sigma * points[j].Sigma - points[j + 1].Sigma * points[j + 1].Sigma;
                sumDt += dt;
            }
            diffusion = sumDt > 0 ? Math.Max(0, excess / sumDt) : 0;
        }
        return new FreeSignalTrack(points, diffusion, false);
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
