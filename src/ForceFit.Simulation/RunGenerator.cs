using ForceFit.Theory.Geometry;

namespace ForceFit.Simulation;

/// <summary>The true parameters of one simulated run (SI).</summary>
/// <param name="Name">Run name.</param>
/// <param name="GapOffset">z0 (m).</param>
/// <param name="PiezoScale">True s.</param>
/// <param name="SpringConstant">k (N/m).</param>
/// <param name="FreeFrequency">f0 at t = 0 (Hz), frequency mode.</param>
/// <param name="DeflectionSensitivity">m (m/V), deflection mode.</param>
/// <param name="DeflectionFree">S_free at t = 0 (V), deflection mode.</param>
/// <param name="ResidualPotential">V0 at the reference gap and t = 0 (V).</param>
/// <param name="ResidualPotentialGapSlope">dV0/da (V/m).</param>
/// <param name="ResidualPotentialTimeSlope">dV0/dt (V/s).</param>
/// <param name="ReferenceGapForV0">The gap at which V0 is quoted (m).</param>
/// <param name="GapDriftRate">dz0/dt (m/s).</param>
/// <param name="Amplitude">Oscillation amplitude (m).</param>
public sealed record RunTruth(
    string Name,
    double GapOffset,
    double PiezoScale,
    double SpringConstant,
    double FreeFrequency,
    double DeflectionSensitivity,
    double DeflectionFree,
    double ResidualPotential,
    double ResidualPotentialGapSlope,
    double ResidualPotentialTimeSlope,
    double ReferenceGapForV0,
    double GapDriftRate,
    double Amplitude);

/// <summary>The truth of one step: what a perfect analysis would find for the step's mean.</summary>
/// <param name="Index">0-based step number in the run.</param>
/// <param name="Piezo">Commanded piezo reading (m).</param>
/// <param name="Bias">Commanded bias (V).</param>
/// <param name="Start">Start time (s).</param>
/// <param name="End">End time (s).</param>
/// <param name="IsReference">A force-free reference step.</param>
/// <param name="MeanGap">Mean true gap over the kept part (m).</param>
/// <param name="MeanSignal">Mean noise-free signal over the samples after the settle time (Hz or V).</param>
/// <param name="SamplesKept">Samples written after the settle time.</param>
public sealed record StepTruth(int Index, double Piezo, double Bias, double Start, double End, bool IsReference, double MeanGap, double MeanSignal, int SamplesKept);

/// <summary>One sample as written: time, recorded piezo and bias (with readout noise) and the signal (SI).</summary>
public interface ISampleSink
{
    /// <summary>Takes one row.</summary>
    void Add(double time, double piezo, double bias, double signal);
}

/// <summary>One commanded segment: a step (constant piezo and bias) or a ramp (piezo moving at constant bias).</summary>
/// <param name="PiezoStart">Commanded reading at the start (m).</param>
/// <param name="PiezoEnd">Commanded reading at the end (m); equal to the start for a step.</param>
/// <param name="Bias">Commanded bias (V).</param>
/// <param name="Duration">Length (s).</param>
/// <param name="IsReference">A reference step far away.</param>
public sealed record Segment(double PiezoStart, double PiezoEnd, double Bias, double Duration, bool IsReference);

/// <summary>Generates the samples of one run from its truth, its schedule and the scenario's imperfections.</summary>
public sealed class RunGenerator
{
    private readonly Scenario _s;
    private readonly RunTruth _truth;
    private readonly ForceModel _forces;
    private readonly RandomSource _random;

    /// <summary>Prepares a run.</summary>
    public RunGenerator(Scenario scenario, RunTruth truth, ForceModel forces, RandomSource random)
    {
        _s = scenario;
        _truth = truth;
        _forces = forces;
        _random = random;
    }

    /// <summary>True gap at commanded reading p and time t: a = z0 + v t + d s p (direction "away", d = +1).</summary>
    public double Gap(double piezo, double time) =>
        _truth.GapOffset + (_s.Imperfections.GapDrift ? _truth.GapDriftRate * time : 0) + _truth.PiezoScale * piezo;

    /// <summary>V0 at gap a and time t.</summary>
    public double ResidualPotential(double gap, double time) => _s.Imperfections.ResidualPotentialVariation
        ? _truth.ResidualPotential + _truth.ResidualPotentialGapSlope * (gap - _truth.ReferenceGapForV0) + _truth.ResidualPotentialTimeSlope * time
        : _truth.ResidualPotential;

    /// <summary>The noise-free signal without drift of the free value: f0 sqrt(1 − &lt;F'&gt;/k), or S_free + x/m.</summary>
    public double Signal(double gap, double bias, double time, double free)
    {
        double effective = bias - ResidualPotential(gap, time);
        if (_s.Mode == SimulatedMode.FrequencyShift)
        {
            double gradient = _forces.AveragedGradient(gap, effective, _truth.Amplitude);
            return free * Math.Sqrt(1 - gradient / _truth.SpringConstant);
        }
        double x = _forces.Deflection(gap, effective, _truth.SpringConstant);
        // V0 belongs to the actual separation, the sphere deflected by x: once more with V0 there (x moves V0 by
        // microvolts, which moves x by far less than a femtometre).
        x = _forces.Deflection(gap, bias - ResidualPotential(gap - x, time), _truth.SpringConstant);
        return free + x / _truth.DeflectionSensitivity;
    }

    /// <summary>Runs the schedule, writing rows to the sink; returns the truth of each step (ramps: of each segment).</summary>
    public IReadOnlyList<StepTruth> Generate(IReadOnlyList<Segment> schedule, ISampleSink sink)
    {
        Imperfections im = _s.Imperfections;
        bool frequency = _s.Mode == SimulatedMode.FrequencyShift;
        double dt = 1 / _s.SampleRate;
        double noiseSigma = frequency ? _s.FrequencyNoise : _s.DeflectionNoise;
        var noiseRandom = _random.Fork(1);
        Ar1Noise? ar1 = frequency && im.CorrelatedNoise ? new Ar1Noise(noiseRandom, noiseSigma, _s.FrequencyNoiseCorrelation) : null;
        var readout = _random.Fork(2);
        var events = _random.Fork(3);
        var drift = _random.Fork(4);
        double lag = im.Settling ? Math.Exp(-dt / _s.SettlingTime) : 0;
        double glitchProbability = im.Glitches ? _s.GlitchesPerHour / 3600 * dt : 0;
        double randomWalkStep = frequency ? _s.FreeFrequencyRandomWalk * Math.Sqrt(dt) : 0;
        double free0 = frequency ? _truth.FreeFrequency : _truth.DeflectionFree;
        double freeRate = frequency ? _s.FreeFrequencyDriftRate : _s.DeflectionFreeDriftRate;
        double walk = 0;
        double measured = double.NaN;
        var steps = new List<StepTruth>();
        double time = 0;
        long sample = 0;
        for (int k = 0; k < schedule.Count; k++)
        {
            Segment seg = schedule[k];
            int n = (int)Math.Round(seg.Duration * _s.SampleRate);
            bool isStep = seg.PiezoStart == seg.PiezoEnd;
            double start = time;
            // Within a step only drifts change the signal: evaluate the force model at the step's first and last
            // sample and interpolate linearly (the drift over a step is far below a picometre).
            double first = 0, last = 0;
            if (isStep)
            {
                first = Signal(Gap(seg.PiezoStart, start), seg.Bias, start, 1.0);
                last = Signal(Gap(seg.PiezoStart, start + (n - 1) * dt), seg.Bias, start + (n - 1) * dt, 1.0);
            }
            double sumTrue = 0, sumGap = 0;
            int kept = 0;
            for (int i = 0; i < n; i++, sample++)
            {
                time = start + i * dt;
                double fraction = n > 1 ? (double)i / (n - 1) : 0;
                double piezo = seg.PiezoStart + (seg.PiezoEnd - seg.PiezoStart) * fraction;
                double free = free0 + (im.FreeFrequencyDrift ? freeRate * time + walk : 0);
                if (im.FreeFrequencyDrift) walk += randomWalkStep * drift.NextGaussian();
                double gap = Gap(piezo, time);
                double truthSignal;
                if (isStep)
                {
                    double shape = first + (last - first) * fraction;
                    truthSignal = frequency ? free * shape : free - 1.0 + shape; // Signal(.., free = 1) carries S_free = 1 in deflection mode
                }
                else
                {
                    truthSignal = Signal(gap, seg.Bias, time, free);
                }
                // First-order lag of the recorded signal (tracking loop or electronics).
                measured = double.IsNaN(measured) || lag == 0 ? truthSignal : truthSignal + (measured - truthSignal) * lag;
                double noise = ar1 is not null ? ar1.Next() : noiseSigma * noiseRandom.NextGaussian();
                if (glitchProbability > 0 && events.NextDouble() < glitchProbability)
                    noise += (events.NextDouble() < 0.5 ? -1 : 1) * _s.GlitchSize * noiseSigma;
                double recordedPiezo = piezo + (im.ReadoutNoise ? _s.PiezoReadoutNoise * readout.NextGaussian() : 0);
                double recordedBias = seg.Bias + (im.ReadoutNoise ? _s.BiasReadoutNoise * readout.NextGaussian() : 0);
                bool dropped = im.DroppedSamples && events.NextDouble() < _s.DropProbability;
                if (time - start >= _s.Settle - 1e-12 && !dropped)
                {
                    sumTrue += truthSignal;
                    sumGap += gap;
                    kept++;
                }
                if (!dropped) sink.Add(time, recordedPiezo, recordedBias, measured + noise);
            }
            time = start + n * dt;
            steps.Add(new StepTruth(k, seg.PiezoStart, seg.Bias, start, time, seg.IsReference,
                kept > 0 ? sumGap / kept : double.NaN, kept > 0 ? sumTrue / kept : double.NaN, kept));
        }
        return steps;
    }
}

/// <summary>Builds the commanded schedule of a run.</summary>
public static class Schedules
{
    /// <summary>
    /// Voltage steps: positions from far to near (every other run near to far), at each the biases in a shuffled
    /// order, then one reference step far away at the central bias (the operator's estimate of V0).
    /// </summary>
    public static IReadOnlyList<Segment> VoltageSteps(Scenario s, double gapOffsetGuess, double biasCentre, int runIndex, RandomSource random)
    {
        var segments = new List<Segment>();
        var gaps = Enumerable.Range(0, s.Positions).Select(i => s.FarthestGap - (s.FarthestGap - s.NearestGap) * i / (s.Positions - 1.0)).ToList();
        if (runIndex % 2 == 1) gaps.Reverse();
        double referencePiezo = s.EffectiveReferenceGap - gapOffsetGuess;
        foreach (double gap in gaps)
        {
            double piezo = gap - gapOffsetGuess;
            double span = Math.Min(0.5, s.BiasSpanNear * Math.Pow(gap / s.NearestGap, 0.75));
            var biases = Enumerable.Range(0, s.Biases).Select(i => biasCentre + span * (2.0 * i / (s.Biases - 1) - 1)).ToArray();
            Shuffle(biases, random);
            foreach (double bias in biases) segments.Add(new Segment(piezo, piezo, bias, s.StepDuration, false));
            segments.Add(new Segment(referencePiezo, referencePiezo, biasCentre, s.StepDuration, true));
        }
        return segments;
    }

    /// <summary>
    /// Distance ramps: at each bias an approach from the reference gap to the nearest gap and a retraction back,
    /// at constant speed, with a short hold at each end.
    /// </summary>
    public static IReadOnlyList<Segment> DistanceRamps(Scenario s, double gapOffsetGuess, double biasCentre, RandomSource random)
    {
        var segments = new List<Segment>();
        double far = s.EffectiveReferenceGap - gapOffsetGuess, near = s.NearestGap - gapOffsetGuess;
        double duration = (far - near) / s.RampSpeed;
        var biases = Enumerable.Range(0, s.Biases).Select(i => biasCentre + s.BiasSpanNear * (2.0 * i / (s.Biases - 1) - 1)).ToArray();
        Shuffle(biases, random);
        foreach (double bias in biases)
        {
            segments.Add(new Segment(far, far, bias, s.StepDuration, true));
            segments.Add(new Segment(far, near, bias, duration, false));
            segments.Add(new Segment(near, far, bias, duration, false));
        }
        return segments;
    }

    private static void Shuffle(double[] values, RandomSource random)
    {
        for (int i = values.Length - 1; i > 0; i--)
        {
            int j = (int)(random.NextDouble() * (i + 1));
            (values[i], values[j]) = (values[j], values[i]);
        }
    }
}
