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
    // The readout noise that sets the step thresholds is estimated from the first samples.
    private const int ThresholdSamples = 1 << 16;
    private const int MaxLag = 256;

    /// <summary>Reduces one run. Progress receives bytes read; cancellation is checked between blocks.</summary>
    public static RunSegments Read(RunSettings run, IProgress<long>? progress = null, CancellationToken cancel = default)
    {
        using ISampleSource source = SampleSources.Open(run);
        var warnings = new List<string>();
        var pending = new List<Raw>();
        var noise = new NoiseModel.Accumulator(MaxLag);
        var envelope = new EnvelopeBuilder();
        Segmenter? segmenter = null;
        long samples = 0;
        while (source.Next() is { } block)
        {
            cancel.ThrowIfCancellationRequested();
            if (segmenter is null)
            {
                int head = Math.Min(block.Count, ThresholdSamples);
                StepThresholds t = StepThresholds.Estimate(block.Piezo.AsSpan(0, head), block.Bias.AsSpan(0, head));
                segmenter = run.Protocol == Protocol.VoltageSteps ? new StepSegmenter(run, t, pending, noise) : new RampSegmenter(run, t, pending, noise);
            }
            // The figures' envelope is built on a worker while this thread finds the steps; both only read the block.
            Task drawing = Task.Run(() => envelope.Add(block), CancellationToken.None);
            segmenter.Add(block);
            drawing.GetAwaiter().GetResult();
            samples += block.Count;
            progress?.Report(source.BytesRead);
        }
        if (segmenter is null) throw new InputException(new Problem(run.DataFile, null, "the file has a header but no data rows"));
        segmenter.Finish();
        warnings.AddRange(source.Warnings);
        NoiseModel? built = noise.Build();
        if (built is null && segmenter is RampSegmenter ramps && ramps.BinNoise.Build() is { } fromBins)
        {
            built = fromBins;
            warnings.Add($"{run.DataFile}: no hold of the piezo (at least 16 samples after 'settle') at the start of any bias: the noise model comes from the gap bins, which are shorter than the noise's correlation, so the uncertainties are too small");
        }
        NoiseModel model = built ?? throw new InputException(new Problem(run.DataFile, null,
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

        public abstract void Add(SampleBlock block);

        public abstract void Finish();

        protected bool IsReference(double piezo) => Run.Instrument.ReferenceBeyond is { } beyond
            && (Run.Piezo.Direction == PiezoDirection.Away ? piezo > beyond.Value : piezo < beyond.Value);

        /// <summary>Clips glitches, records residuals for the noise model (the run's, or <paramref name="into"/>), and returns mean, naive sigma, n and clipped.</summary>
        [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
        protected (double Mean, double Naive, int N, int Clipped) Summarise(ReadOnlySpan<double> values, Func<int, double>? trend = null, NoiseModel.Accumulator? into = null,
            Span<bool> clippedMask = default)
        {
            int n = values.Length;
            if (n == 0) return (double.NaN, double.NaN, 0, 0);
            if (_residual.Length < n)
            {
                _residual = new double[Math.Max(n, 2 * _residual.Length)];
                _keptResidual = new double[_residual.Length];
            }
            Span<double> residual = _residual.AsSpan(0, n);
            if (trend is null) values.CopyTo(residual);
            else for (int i = 0; i < n; i++) residual[i] = values[i] - trend(i);
            // Robust centre and spread (median and 1.4826 MAD) from at most 4096 evenly spaced samples: enough to
            // recognise glitches of tens of sigmas, and cheap for long steps.
            int stride = Math.Max(1, (n + 4095) / 4096);
            Span<double> sample = _sorted.AsSpan(0, (n + stride - 1) / stride);
            for (int i = 0, j = 0; i < n; i += stride) sample[j++] = residual[i];
            double median = Selection.Nth(sample, sample.Length / 2);
            for (int i = 0; i < sample.Length; i++) sample[i] = Math.Abs(sample[i] - median);
            double spread = 1.4826 * Selection.Nth(sample, sample.Length / 2);
            int clipped = 0;
            double sum = 0, sumTrend = 0;
            int kept = 0;
            Span<double> keptResidual = _keptResidual.AsSpan(0, n);
            double limit = spread > 0 ? 10 * spread : double.PositiveInfinity;
            for (int i = 0; i < n; i++)
            {
                double r = residual[i];
                bool glitch = Math.Abs(r - median) > limit;
                if (clippedMask.Length > i) clippedMask[i] = glitch;
                if (glitch)
                {
                    clipped++;
                    continue;
                }
                keptResidual[kept++] = r;
                sum += values[i];
                if (trend is not null) sumTrend += trend(i);
            }
            double mean = sum / kept;
            double residualMean = (sum - sumTrend) / kept;
            double ss = 0;
            for (int i = 0; i < kept; i++)
            {
                double r = keptResidual[i] - residualMean;
                keptResidual[i] = r;
                ss += r * r;
            }
            (into ?? _noise).Add(keptResidual[..kept], kept);
            return (mean, kept > 1 ? Math.Sqrt(ss / (kept - 1) / kept) : double.NaN, kept, clipped);
        }
    }

    /// <summary>voltage-steps: steps from the commanded channels, the settle time dropped.</summary>
    internal sealed class StepSegmenter : Segmenter
    {
        private readonly StepDetector _detector;
        private readonly double _settle;
        private readonly StepBuffer _step = new();

        public StepSegmenter(RunSettings run, StepThresholds thresholds, List<Raw> output, NoiseModel.Accumulator noise)
            : base(run, thresholds, output, noise)
        {
            _detector = new StepDetector(thresholds);
            _settle = run.Settle?.Value ?? 0;
        }

        [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
        public override void Add(SampleBlock block)
        {
            double[] piezo = block.Piezo, bias = block.Bias;
            int n = block.Count, from = 0;
            for (int i = 0; i < n; i++)
            {
                int moved = _detector.Add(piezo[i], bias[i]);
                if (moved == 0) continue;
                _step.Append(block, from, i + 1);
                from = i + 1;
                int cut = _step.Count - moved;
                Close(cut);
                _step.RemoveFront(cut);
            }
            _step.Append(block, from, n);
        }

        public override void Finish() => Close(_step.Count);

        private void Close(int count)
        {
            if (count == 0) return;
            double[] t = _step.Time;
            double start = t[0];
            int first = 0;
            while (first < count && t[first] < start + _settle - 1e-12) first++;
            int kept = count - first;
            if (kept == 0) return; // a step shorter than the settle time holds nothing to keep
            double sumP = 0, sumV = 0, sumT = 0;
            for (int i = first; i < count; i++)
            {
                sumP += _step.Piezo[i];
                sumV += _step.Bias[i];
                sumT += t[i];
            }
            (double mean, double naive, int n, int clipped) = Summarise(_step.Signal.AsSpan(first, kept));
            double piezo = sumP / kept;
            Output.Add(new Raw(IsReference(piezo) ? SegmentKind.Reference : SegmentKind.Step, start, t[count - 1], piezo, sumV / kept,
                mean, naive, n, clipped, _step.Lines[0], sumT / kept));
        }
    }

    /// <summary>The samples of the step being read, in growable arrays reused from step to step.</summary>
    internal sealed class StepBuffer
    {
        public double[] Time = new double[1024], Piezo = new double[1024], Bias = new double[1024], Signal = new double[1024];
        public long[] Lines = new long[1024];
        public int Count;

        [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
        public void Append(SampleBlock block, int from, int to)
        {
            int n = to - from;
            if (n <= 0) return;
            if (Count + n > Time.Length)
            {
                int size = Math.Max(Count + n, 2 * Time.Length);
                Array.Resize(ref Time, size); Array.Resize(ref Piezo, size); Array.Resize(ref Bias, size); Array.Resize(ref Signal, size); Array.Resize(ref Lines, size);
            }
            Array.Copy(block.Time, from, Time, Count, n);
            Array.Copy(block.Piezo, from, Piezo, Count, n);
            Array.Copy(block.Bias, from, Bias, Count, n);
            Array.Copy(block.Signal, from, Signal, Count, n);
            long lineBase = block.LineBase;
            int[] offsets = block.LineOffsets;
            for (int i = 0; i < n; i++) Lines[Count + i] = lineBase + offsets[from + i];
            Count += n;
        }

        public void RemoveFront(int cut)
        {
            int rest = Count - cut;
            Array.Copy(Time, cut, Time, 0, rest);
            Array.Copy(Piezo, cut, Piezo, 0, rest);
            Array.Copy(Bias, cut, Bias, 0, rest);
            Array.Copy(Signal, cut, Signal, 0, rest);
            Array.Copy(Lines, cut, Lines, 0, rest);
            Count = rest;
        }
    }

    /// <summary>
    /// distance-ramps: segments of constant bias; a hold at the segment's start (the piezo still) is a step of its
    /// own (a reference step beyond reference_beyond); the rest is split into sweeps where the piezo reverses, the
    /// first settle seconds of every sweep dropped (the signal's lag after the turn), and the samples binned by piezo
    /// reading in bins of bin_width; the bin's mean signal belongs to its mean reading.
    /// </summary>
    internal sealed class RampSegmenter : Segmenter
    {
        private readonly StepDetector _biasDetector;
        private readonly double _bin;
        private readonly double _reversal;
        private readonly double _settle;
        private readonly double _holdTolerance;
        private readonly List<(double T, double P, double V, double S, long Line)> _segment = [];
        private readonly double[] _head = new double[32];

        public RampSegmenter(RunSettings run, StepThresholds thresholds, List<Raw> output, NoiseModel.Accumulator noise)
            : base(run, thresholds, output, noise)
        {
            // Only the bias defines a segment; the piezo moves all the time.
            _biasDetector = new StepDetector(thresholds with { Piezo = double.PositiveInfinity });
            _bin = run.BinWidth?.Value ?? throw new InvalidOperationException("bin_width is required for distance-ramps");
            _reversal = Math.Max(20 * thresholds.PiezoNoise, 2 * _bin);
            _settle = run.Settle?.Value ?? 0;
            // The piezo has left a hold once it is further than 8 readout sigmas (or a tenth of a bin) from it.
            _holdTolerance = Math.Max(8 * thresholds.PiezoNoise, 0.1 * _bin);
        }

        /// <summary>
        /// Bins hold fewer samples than the noise's correlation time (a 2 nm bin at 40 nm/s is 0.05 s), so the noise
        /// model comes from the holds, which are steps. Runs without holds fall back on the bins' residuals about
        /// their linear trend, which see only the short-lag part of the correlation (their uncertainties are too small).
        /// </summary>
        public NoiseModel.Accumulator BinNoise { get; } = new(256);

        public override void Add(SampleBlock block)
        {
            for (int i = 0; i < block.Count; i++)
            {
                double p = block.Piezo[i], v = block.Bias[i];
                _segment.Add((block.Time[i], p, v, block.Signal[i], block.LineOf(i)));
                int moved = _biasDetector.Add(p, v);
                if (moved == 0) continue;
                int cut = _segment.Count - moved;
                CloseSegment(cut);
                _segment.RemoveRange(0, cut);
            }
        }

        public override void Finish() => CloseSegment(_segment.Count);

        private void CloseSegment(int count)
        {
            if (count == 0) return;
            int sweepStart = Hold(count);
            if (sweepStart >= count) return;
            // Split at reversals of the piezo: a move back by more than the reversal distance from the running extreme.
            int direction = 0;
            double extreme = _segment[sweepStart].P;
            for (int i = sweepStart + 1; i < count; i++)
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

        // The hold at the segment's start: samples whose reading stays within the tolerance of the first readings'
        // median. Written as a step (after the settle time) when it keeps at least 16 samples; returns its end.
        private int Hold(int count)
        {
            int m = Math.Min(_head.Length, count);
            for (int i = 0; i < m; i++) _head[i] = _segment[i].P;
            double p0 = Selection.Nth(_head.AsSpan(0, m), m / 2);
            int end = 0;
            while (end < count && Math.Abs(_segment[end].P - p0) <= _holdTolerance) end++;
            double start = _segment[0].T;
            int first = 0;
            while (first < end && _segment[first].T < start + _settle - 1e-12) first++;
            int kept = end - first;
            if (kept < 16) return end;
            double[] values = new double[kept];
            double sumP = 0, sumV = 0, sumT = 0;
            for (int i = first; i < end; i++)
            {
                values[i - first] = _segment[i].S;
                sumP += _segment[i].P;
                sumV += _segment[i].V;
                sumT += _segment[i].T;
            }
            (double mean, double naive, int n, int clipped) = Summarise(values);
            double piezo = sumP / kept;
            Output.Add(new Raw(IsReference(piezo) ? SegmentKind.Reference : SegmentKind.Step, start, _segment[end - 1].T, piezo, sumV / kept,
                mean, naive, n, clipped, _segment[0].Line, sumT / kept));
            return end;
        }

        private int LastIndexOfExtreme(int from, int to, int direction)
        {
            int best = from;
            for (int i = from; i < to; i++) if (direction * (_segment[i].P - _segment[best].P) > 0) best = i;
            return best;
        }

        private void BinSweep(int from, int to, int direction)
        {
            // The first settle seconds after the start or the turn are dropped: the lagging signal still carries the
            // previous motion there.
            double start = _segment[from].T;
            while (from < to && _segment[from].T < start + _settle - 1e-12) from++;
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
                // Linear trend of the signal in the reading within the bin (for the fallback noise model only).
                double sxx = 0, sxy = 0, meanS = idx.Average(i => _segment[i].S);
                foreach (int i in idx)
                {
                    double dx = _segment[i].P - meanP;
                    sxx += dx * dx;
                    sxy += dx * (_segment[i].S - meanS);
                }
                double slope = sxx > 0 ? sxy / sxx : 0;
                double[] values = idx.Select(i => _segment[i].S).ToArray();
                var glitches = new bool[idx.Count];
                (double mean, double naive, int n, int clipped) = Summarise(values, k => slope * (_segment[idx[k]].P - meanP), BinNoise, glitches);
                // The bin's reading, bias and time are those of the samples its mean signal keeps: a sample left out as a
                // glitch would otherwise move the reading against the mean by up to a sample's step in a steep stretch.
                double sumP = 0, sumV = 0, sumT = 0;
                for (int k = 0; k < idx.Count; k++)
                {
                    if (glitches[k]) continue;
                    sumP += _segment[idx[k]].P;
                    sumV += _segment[idx[k]].V;
                    sumT += _segment[idx[k]].T;
                }
                Output.Add(new Raw(kind, _segment[idx[0]].T, _segment[idx[^1]].T, sumP / n, sumV / n, mean, naive, n, clipped, _segment[idx[0]].Line, sumT / n));
            }
        }
    }
}
