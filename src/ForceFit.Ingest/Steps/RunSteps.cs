using ForceFit.Core.Problems;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Streams;

namespace ForceFit.Ingest.Steps;

/// <summary>What a row of tables/steps.csv describes.</summary>
public enum SegmentKind
{
    /// <summary>A voltage step at a measurement position.</summary>
    Step,
    /// <summary>A step beyond reference_beyond: force-free, gives the free signal.</summary>
    Reference,
    /// <summary>A gap bin of a ramp toward the plate.</summary>
    Approach,
    /// <summary>A gap bin of a ramp away from the plate.</summary>
    Retract,
}

/// <summary>Statistics of one step or gap bin (SI).</summary>
/// <param name="Run">Run name.</param>
/// <param name="Index">0-based number within the run.</param>
/// <param name="Kind">Step, reference step, approach bin or retract bin.</param>
/// <param name="Start">Time of the first sample (s).</param>
/// <param name="End">Time of the last sample (s).</param>
/// <param name="Piezo">Mean recorded piezo reading of the kept samples (m).</param>
/// <param name="Bias">Mean recorded bias of the kept samples (V).</param>
/// <param name="Mean">Mean signal of the kept samples (Hz or V).</param>
/// <param name="Sigma">Standard uncertainty of the mean from the run's correlated-noise model.</param>
/// <param name="NaiveSigma">sd / sqrt(n), shown for comparison only: it ignores the correlation.</param>
/// <param name="SamplesKept">Samples used (after the settle time, without clipped glitches).</param>
/// <param name="Clipped">Samples removed as glitches (beyond 10 robust sigmas of the step).</param>
/// <param name="FirstLine">Line (CSV) or index (HDF5) of the first sample.</param>
/// <param name="MeanTime">Mean time of the kept samples (s): where a drifting free signal is read for this step.</param>
public sealed record SegmentStatistics(
    string Run, int Index, SegmentKind Kind, double Start, double End, double Piezo, double Bias,
    double Mean, double Sigma, double NaiveSigma, int SamplesKept, int Clipped, long FirstLine, double MeanTime);

/// <summary>A run reduced to steps or bins, with its noise model and any warnings.</summary>
/// <param name="Run">The run's settings.</param>
/// <param name="Segments">Steps or bins in time order.</param>
/// <param name="Noise">The pooled noise model.</param>
/// <param name="Thresholds">The step-detection thresholds used.</param>
/// <param name="Samples">Samples read.</param>
/// <param name="Bytes">Bytes of input read.</param>
/// <param name="Warnings">Things the analysis should report.</param>
public sealed record RunSegments(RunSettings Run, IReadOnlyList<SegmentStatistics> Segments, NoiseModel Noise, StepThresholds Thresholds, long Samples, long Bytes, IReadOnlyList<string> Warnings)
{
    /// <summary>Minimum/maximum envelope of the raw channels and the first samples, for the report's figures.</summary>
    public SignalEnvelope? Envelope { get; init; }
}

/// <summary>
/// Reads a run's data in one streaming pass and reduces it to steps (voltage-steps) or gap bins
/// (distance-ramps). Memory grows with the number of steps and bins, not with the number of samples.
/// </summary>
public static class RunSteps
{
    private const int BlockSize = 1 << 16;
    private const int MaxLag = 256;

    /// <summary>Reduces one run. Progress receives bytes read; cancellation is checked between blocks.</summary>
    public static RunSegments Read(RunSettings run, IProgress<long>? progress = null, CancellationToken cancel = default)
    {
        using ISampleSource source = SampleSources.Open(run);
        var block = new SampleBlock(BlockSize);
        var warnings = new List<string>();
        var pending = new List<Raw>();
        var noise = new NoiseModel.Accumulator(MaxLag);
        var envelope = new EnvelopeBuilder();
        Segmenter? segmenter = null;
        long samples = 0;
        while (source.Read(block))
        {
            cancel.ThrowIfCancellationRequested();
            if (segmenter is null)
            {
                StepThresholds t = StepThresholds.Estimate(block.Piezo.AsSpan(0, block.Count), block.Bias.AsSpan(0, block.Count));
                segmenter = run.Protocol == Protocol.VoltageSteps ? new StepSegmenter(run, t, pending, noise) : new RampSegmenter(run, t, pending, noise);
            }
            for (int i = 0; i < block.Count; i++)
            {
                segmenter.Add(block.Time[i], block.Piezo[i], block.Bias[i], block.Signal[i], block.Lines[i]);
                envelope.Add(block.Time[i], block.Piezo[i], block.Bias[i], block.Signal[i]);
            }
            samples += block.Count;
            progress?.Report(source.BytesRead);
        }
        if (segmenter is null) throw new InputException(new Problem(run.DataFile, null, "the file has a header but no data rows"));
        segmenter.Finish();
        warnings.AddRange(source.Warnings);
        NoiseModel model = noise.Build() ?? throw new InputException(new Problem(run.DataFile, null,
            "too few samples after the settle time to estimate the noise: are the steps shorter than 'settle'?"));
        var segments = pending.Select((r, i) => new SegmentStatistics(run.Name, i, r.Kind, r.Start, r.End, r.Piezo, r.Bias, r.Mean,
            model.SigmaOfMean(r.N), r.NaiveSigma, r.N, r.Clipped, r.FirstLine, r.MeanTime)).ToArray();
        if (!model.WindowConverged)
            warnings.Add($"{run.DataFile}: the signal's correlation time ({model.IntegratedTime:F0} samples) needs a longer window than the {MaxLag} lags computed; the step uncertainties may be too small");
        int clipped = segments.Sum(s => s.Clipped);
        if (clipped > 0) warnings.Add($"{run.DataFile}: {clipped} sample(s) in {segments.Count(s => s.Clipped > 0)} step(s) were more than 10 robust sigmas from their step and were left out as glitches");
        return new RunSegments(run, segments, model, segmenter.Thresholds, samples, source.Length, warnings) { Envelope = envelope.Build() };
    }

    /// <summary>A closed step or bin before its sigma is known.</summary>
    internal sealed record Raw(SegmentKind Kind, double Start, double End, double Piezo, double Bias, double Mean, double NaiveSigma, int N, int Clipped, long FirstLine, double MeanTime);

    internal abstract class Segmenter(RunSettings run, StepThresholds thresholds, List<Raw> output, NoiseModel.Accumulator noise)
    {
        protected readonly RunSettings Run = run;
        protected readonly List<Raw> Output = output;
        private readonly NoiseModel.Accumulator _noise = noise;
        // Work buffers reused from step to step (long steps would otherwise allocate on the large-object heap).
        private double[] _residual = new double[4096], _keptResidual = new double[4096];
        private readonly double[] _sorted = new double[4097];
        public StepThresholds Thresholds { get; } = thresholds;

        public abstract void Add(double t, double p, double v, double s, long line);

        public abstract void Finish();

        protected bool IsReference(double piezo) => Run.Instrument.ReferenceBeyond is { } beyond
            && (Run.Piezo.Direction == PiezoDirection.Away ? piezo > beyond.Value : piezo < beyond.Value);

        /// <summary>Clips glitches, records residuals for the noise model, and returns mean, naive sigma, n and clipped.</summary>
        protected (double Mean, double Naive, int N, int Clipped) Summarise(List<double> values, Func<int, double>? trend = null)
        {
            int n = values.Count;
            if (n == 0) return (double.NaN, double.NaN, 0, 0);
            if (_residual.Length < n)
            {
                _residual = new double[Math.Max(n, 2 * _residual.Length)];
                _keptResidual = new double[_residual.Length];
            }
            Span<double> residual = _residual.AsSpan(0, n);
            for (int i = 0; i < n; i++) residual[i] = values[i] - (trend?.Invoke(i) ?? 0);
            // Robust centre and spread (median and 1.4826 MAD) from at most 4096 evenly spaced samples: enough to
            // recognise glitches of tens of sigmas, and cheap for long steps.
            int stride = Math.Max(1, (n + 4095) / 4096);
            Span<double> sorted = _sorted.AsSpan(0, (n + stride - 1) / stride);
            for (int i = 0, j = 0; i < n; i += stride) sorted[j++] = residual[i];
            sorted.Sort();
            double median = sorted[sorted.Length / 2];
            for (int i = 0; i < sorted.Length; i++) sorted[i] = Math.Abs(sorted[i] - median);
            sorted.Sort();
            double spread = 1.4826 * sorted[sorted.Length / 2];
            int clipped = 0;
            double sum = 0, sumTrend = 0;
            int kept = 0;
            Span<double> keptResidual = _keptResidual.AsSpan(0, n);
            for (int i = 0; i < n; i++)
            {
                if (spread > 0 && Math.Abs(residual[i] - median) > 10 * spread)
                {
                    clipped++;
                    continue;
                }
                keptResidual[kept++] = residual[i];
                sum += values[i];
                sumTrend += trend?.Invoke(i) ?? 0;
            }
            double mean = sum / kept;
            double residualMean = (sum - sumTrend) / kept;
            double ss = 0;
            for (int i = 0; i < kept; i++)
            {
                keptResidual[i] -= residualMean;
                ss += keptResidual[i] * keptResidual[i];
            }
            _noise.Add(keptResidual[..kept], kept);
            return (mean, kept > 1 ? Math.Sqrt(ss / (kept - 1) / kept) : double.NaN, kept, clipped);
        }
    }

    /// <summary>voltage-steps: steps from the commanded channels, the settle time dropped.</summary>
    internal sealed class StepSegmenter : Segmenter
    {
        private readonly StepDetector _detector;
        private readonly double _settle;
        private readonly List<double> _t = [], _p = [], _v = [], _s = [];
        private readonly List<long> _lines = [];
        private readonly List<double> _kept = [];

        public StepSegmenter(RunSettings run, StepThresholds thresholds, List<Raw> output, NoiseModel.Accumulator noise)
            : base(run, thresholds, output, noise)
        {
            _detector = new StepDetector(thresholds);
            _settle = run.Settle?.Value ?? 0;
        }

        public override void Add(double t, double p, double v, double s, long line)
        {
            _t.Add(t); _p.Add(p); _v.Add(v); _s.Add(s); _lines.Add(line);
            int moved = _detector.Add(p, v);
            if (moved == 0) return;
            int cut = _t.Count - moved;
            Close(cut);
            _t.RemoveRange(0, cut); _p.RemoveRange(0, cut); _v.RemoveRange(0, cut); _s.RemoveRange(0, cut); _lines.RemoveRange(0, cut);
        }

        public override void Finish() => Close(_t.Count);

        private void Close(int count)
        {
            if (count == 0) return;
            double start = _t[0];
            List<double> kept = _kept;
            kept.Clear();
            double sumP = 0, sumV = 0, sumT = 0;
            int first = -1;
            for (int i = 0; i < count; i++)
            {
                if (_t[i] < start + _settle - 1e-12) continue;
                if (first < 0) first = i;
                kept.Add(_s[i]);
                sumP += _p[i];
                sumV += _v[i];
                sumT += _t[i];
            }
            if (kept.Count == 0) return; // a step shorter than the settle time holds nothing to keep
            (double mean, double naive, int n, int clipped) = Summarise(kept);
            double piezo = sumP / kept.Count;
            Output.Add(new Raw(IsReference(piezo) ? SegmentKind.Reference : SegmentKind.Step, start, _t[count - 1], piezo, sumV / kept.Count,
                mean, naive, n, clipped, _lines[0], sumT / kept.Count));
        }
    }

    /// <summary>
    /// distance-ramps: segments of constant bias split into sweeps where the piezo reverses, samples binned by
    /// piezo reading in bins of bin_width; within a bin the signal is detrended linearly in the reading for the
    /// noise model, and the bin's mean signal belongs to its mean reading.
    /// </summary>
    internal sealed class RampSegmenter : Segmenter
    {
        private readonly StepDetector _biasDetector;
        private readonly double _bin;
        private readonly double _reversal;
        private readonly List<(double T, double P, double V, double S, long Line)> _segment = [];

        public RampSegmenter(RunSettings run, StepThresholds thresholds, List<Raw> output, NoiseModel.Accumulator noise)
            : base(run, thresholds, output, noise)
        {
            // Only the bias defines a segment; the piezo moves all the time.
            _biasDetector = new StepDetector(thresholds with { Piezo = double.PositiveInfinity });
            _bin = run.BinWidth?.Value ?? throw new InvalidOperationException("bin_width is required for distance-ramps");
            _reversal = Math.Max(20 * thresholds.PiezoNoise, 2 * _bin);
        }

        public override void Add(double t, double p, double v, double s, long line)
        {
            _segment.Add((t, p, v, s, line));
            int moved = _biasDetector.Add(p, v);
            if (moved == 0) return;
            int cut = _segment.Count - moved;
            CloseSegment(cut);
            _segment.RemoveRange(0, cut);
        }

        public override void Finish() => CloseSegment(_segment.Count);

        private void CloseSegment(int count)
        {
            if (count == 0) return;
            // Split at reversals of the piezo: a move back by more than the reversal distance from the running extreme.
            int sweepStart = 0, direction = 0;
            double extreme = _segment[0].P;
            for (int i = 1; i < count; i++)
            {
                double p = _segment[i].P;
                if (direction == 0)
                {
                    if (Math.Abs(p - extreme) > _reversal) direction = Math.Sign(p - extreme);
                    continue;
                }
                if (direction * (p - extreme) > 0) extreme = p;
                else if (direction * (extreme - p) > _reversal)
                {
                    int turn = LastIndexOfExtreme(sweepStart, i, direction);
                    BinSweep(sweepStart, turn + 1, direction);
                    sweepStart = turn + 1;
                    direction = -direction;
                    extreme = _segment[i].P;
                }
            }
            if (direction != 0) BinSweep(sweepStart, count, direction);
        }

        private int LastIndexOfExtreme(int from, int to, int direction)
        {
            int best = from;
            for (int i = from; i < to; i++) if (direction * (_segment[i].P - _segment[best].P) > 0) best = i;
            return best;
        }

        private void BinSweep(int from, int to, int direction)
        {
            // Gap decreases toward the plate: with "away" a decreasing reading is an approach.
            bool towardPlate = (Run.Piezo.Direction == PiezoDirection.Away) == (direction < 0);
            SegmentKind kind = towardPlate ? SegmentKind.Approach : SegmentKind.Retract;
            var groups = new SortedDictionary<long, List<int>>();
            for (int i = from; i < to; i++)
            {
                long key = (long)Math.Floor(_segment[i].P / _bin);
                if (!groups.TryGetValue(key, out List<int>? list)) groups[key] = list = [];
                list.Add(i);
            }
            IEnumerable<KeyValuePair<long, List<int>>> ordered = direction > 0 ? groups : groups.Reverse();
            foreach ((_, List<int> idx) in ordered)
            {
                if (idx.Count < 3) continue;
                double meanP = idx.Average(i => _segment[i].P);
                // Linear trend of the signal in the reading within the bin.
                double sxx = 0, sxy = 0, meanS = idx.Average(i => _segment[i].S);
                foreach (int i in idx)
                {
                    double dx = _segment[i].P - meanP;
                    sxx += dx * dx;
                    sxy += dx * (_segment[i].S - meanS);
                }
                double slope = sxx > 0 ? sxy / sxx : 0;
                var values = idx.Select(i => _segment[i].S).ToList();
                (double mean, double naive, int n, int clipped) = Summarise(values, k => slope * (_segment[idx[k]].P - meanP));
                Output.Add(new Raw(IsReference(meanP) ? SegmentKind.Reference : kind, _segment[idx[0]].T, _segment[idx[^1]].T, meanP,
                    idx.Average(i => _segment[i].V), mean, naive, n, clipped, _segment[idx[0]].Line, idx.Average(i => _segment[i].T)));
            }
        }
    }
}
