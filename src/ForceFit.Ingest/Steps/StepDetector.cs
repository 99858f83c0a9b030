namespace ForceFit.Ingest.Steps;

/// <summary>Thresholds for deciding that a commanded channel has moved to a new level.</summary>
/// <param name="Piezo">Change of the recorded piezo (m) that starts a new step.</param>
/// <param name="Bias">Change of the recorded bias (V) that starts a new step.</param>
/// <param name="PiezoNoise">Readout noise of the piezo channel (m), robust estimate.</param>
/// <param name="BiasNoise">Readout noise of the bias channel (V), robust estimate.</param>
public sealed record StepThresholds(double Piezo, double Bias, double PiezoNoise, double BiasNoise)
{
    /// <summary>
    /// Thresholds from the first samples: the readout noise is the median absolute second difference / (0.6745 sqrt 6)
    /// (robust against the few jumps, and blind to a steady motion such as a ramp's), and a new level needs a change of
    /// 8 noise sigmas (so that false splits from noise are vanishingly rare) but never less than 1e-13 m or 1e-7 V, the
    /// written resolution of typical files.
    /// </summary>
    public static StepThresholds Estimate(ReadOnlySpan<double> piezo, ReadOnlySpan<double> bias)
    {
        double sp = RobustDifferenceSigma(piezo), sv = RobustDifferenceSigma(bias);
        return new StepThresholds(Math.Max(8 * sp, 1e-13), Math.Max(8 * sv, 1e-7), sp, sv);
    }

    // x[i+1] − 2 x[i] + x[i−1] of white noise sigma has sd sigma sqrt 6; its median absolute value is 0.6745 of that.
    private static double RobustDifferenceSigma(ReadOnlySpan<double> x)
    {
        if (x.Length < 4) return 0;
        var d = new double[x.Length - 2];
        for (int i = 1; i + 1 < x.Length; i++) d[i - 1] = Math.Abs(x[i + 1] - 2 * x[i] + x[i - 1]);
        double median = Selection.Nth(d, d.Length / 2);
        return median / (0.6745 * Math.Sqrt(6));
    }
}

/// <summary>
/// Splits a stream of samples into steps of constant commanded piezo and bias. A new step starts where both
/// channels' recorded values leave the current step's running mean by more than the threshold for
/// <see cref="Confirm"/> consecutive samples that agree with each other (one odd sample never splits a step).
/// </summary>
public sealed class StepDetector
{
    /// <summary>Consecutive samples needed to confirm a new level.</summary>
    public const int Confirm = 3;

    private readonly StepThresholds _t;
    private double _sumP, _sumV;
    private long _count;
    private int _candidates;
    private double _candP, _candV;

    /// <summary>Starts with the thresholds.</summary>
    public StepDetector(StepThresholds thresholds) => _t = thresholds;

    /// <summary>
    /// Feeds one sample; returns the number of samples, counting back from this one, that belong to a new step
    /// (0 when no new step starts here).
    /// </summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveInlining)]
    public int Add(double piezo, double bias)
    {
        // |x - sum/n| > threshold, written without the division: |n x - sum| > n threshold.
        double n = _count;
        bool away = Math.Abs(piezo * n - _sumP) > _t.Piezo * n || Math.Abs(bias * n - _sumV) > _t.Bias * n;
        if (!away || _count == 0)
        {
            _candidates = 0;
            _sumP += piezo;
            _sumV += bias;
            _count++;
            return 0;
        }
        return Candidate(piezo, bias);
    }

    private int Candidate(double piezo, double bias)
    {
        if (_candidates == 0 || Math.Abs(piezo - _candP) > _t.Piezo || Math.Abs(bias - _candV) > _t.Bias)
        {
            // The first sample off the level, or one not consistent with the candidate level: the candidate starts here.
            _candidates = 0;
            _candP = piezo;
            _candV = bias;
        }
        if (++_candidates < Confirm) return 0;
        // Confirmed: the new step began Confirm samples ago.
        _sumP = _candP * Confirm;
        _sumV = _candV * Confirm;
        _count = Confirm;
        _candidates = 0;
        return Confirm;
    }
}
