using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;

namespace ForceFit.Analysis.Reduction;

/// <summary>One sweep's gap bins inside one window of piezo reading, gathered into a point of the calibration fit.</summary>
/// <param name="Window">Window number, 0 nearest the plate.</param>
/// <param name="Sweep">Sweep number within the run (time order).</param>
/// <param name="Time">Mean time of the samples (s).</param>
/// <param name="Piezo">Mean piezo reading (m).</param>
/// <param name="Moments">Central moments of the true readings about the mean: the bins' means about it and the motion
/// within each bin.</param>
/// <param name="Speed">The sweep's speed in reading (m/s, signed).</param>
/// <param name="Bias">Mean recorded bias of the whole sweep (V): the commanded bias is constant over a sweep, so every
/// window of it takes the sweep's mean reading, whose readout error is shared by them.</param>
/// <param name="Signal">Mean signal.</param>
/// <param name="Sigma">Its uncertainty from the run's noise model, the samples taken as consecutive.</param>
/// <param name="Samples">Samples.</param>
/// <param name="FirstTime">Time of the first sample (s).</param>
/// <param name="LastTime">Time of the last sample (s).</param>
/// <param name="BiasSamples">Samples of the sweep the bias is the mean of.</param>
/// <param name="Parts">Each bin's mean reading, moments and share of the samples, for points averaged bin by bin (the
/// long reference stretches, where one rule over the whole stretch is not exact enough); null for windows.</param>
internal sealed record RampPoint(int Window, int Sweep, double Time, double Piezo, ReadingMoments Moments, double Speed, double Bias, double Signal,
    double Sigma, int Samples, double FirstTime, double LastTime, long BiasSamples, WindowPart[]? Parts = null);

/// <summary>One bin of a point averaged bin by bin: its mean reading, the central moments of its readings and its share of the samples.</summary>
internal readonly record struct WindowPart(double Reading, ReadingMoments Moments, double Weight);

/// <summary>A run's ramps gathered into windows, the covariance of neighbouring windows and the signal's lag.</summary>
/// <param name="Points">One point per sweep and window, in sweep and then window order.</param>
/// <param name="Correlated">Pairs of points of the same sweep whose noise is correlated, with the correlation.</param>
/// <param name="Lag">The signal's first-order lag time (s) from the difference of approach and retract.</param>
/// <param name="LagSigma">Its standard uncertainty (s).</param>
/// <param name="References">Each sweep's bins beyond reference_beyond gathered into one point (window −1): free-signal
/// references at both ends of every bias's sweeps.</param>
/// <param name="SampleInterval">The record's sample interval (s), the median over the bins.</param>
internal sealed record RampWindowSet(RampPoint[] Points, (int I, int L, double Rho)[] Correlated, double Lag, double LagSigma, RampPoint[] References,
    double SampleInterval);

/// <summary>
/// distance-ramps (physics.md, the same electrostatic calibration as for steps): the gap bins of each sweep are gathered
/// into windows of piezo reading that widen geometrically away from the plate (two bins at the nearest, about 36 in
/// all), so that a window plays the part of a piezo position. The model of a window is the three-point Gauss rule of
/// its readings shifted back by the recorded signal's random delay (<see cref="LaggedWindow.Rule"/>), exact to fifth
/// order. The two-point rule it replaced (exact to third order) left 1e-6 of the electrostatic gradient in the widest
/// far windows (~110 nm at 1.5 um) and 7e-5 of the electrostatic shift of the 400 nm reference stretches, which
/// biased noise-free frequency ramps' far points by 4e-3 and k by 6e-6.
/// </summary>
internal static class RampWindows
{
    /// <summary>Windows across the measured range (our choice: enough positions for the calibration, few parameters).</summary>
    public const int TargetWindows = 36;

    /// <summary>Gathers the run's approach and retract bins short of reference_beyond.</summary>
    public static RampWindowSet Build(RunSegments segments)
    {
        RunSettings run = segments.Run;
        double bin = run.BinWidth?.Value ?? throw new InvalidOperationException("bin_width is required for distance-ramps");
        int sign = run.Piezo.Sign;
        double? beyond = run.Instrument.ReferenceBeyond?.Value;
        bool Measured(double piezo) => beyond is not { } b || sign * (piezo - b) <= 0;
        var bins = segments.Segments.Where(s => s.Kind is SegmentKind.Approach or SegmentKind.Retract).ToArray();
        // Sweeps: consecutive bins of one kind at one bias.
        var sweeps = new List<List<SegmentStatistics>>();
        for (int i = 0; i < bins.Length; i++)
        {
            bool next = i == 0 || bins[i].Kind != bins[i - 1].Kind || Math.Abs(bins[i].Bias - bins[i - 1].Bias) > segments.Thresholds.Bias
                || bins[i].Index != bins[i - 1].Index + 1;
            if (next) sweeps.Add([]);
            sweeps[^1].Add(bins[i]);
        }
        var measured = bins.Where(b => Measured(b.Piezo)).ToArray();
        if (measured.Length == 0) return new RampWindowSet([], [], 0, 0, [], 0);
        // Depth in bins from the nearest measured bin (0 nearest the plate) and the windows' edges in depth.
        long Key(double piezo) => (long)Math.Floor(piezo / bin);
        long nearestKey = sign > 0 ? measured.Min(b => Key(b.Piezo)) : measured.Max(b => Key(b.Piezo));
        long Depth(double piezo) => sign * (Key(piezo) - nearestKey);
        long depthRange = measured.Max(b => Depth(b.Piezo)) + 1;
        long[] edges = Edges(depthRange);
        int WindowOf(double piezo)
        {
            long d = Depth(piezo);
            int w = Array.BinarySearch(edges, d);
            return w >= 0 ? w : ~w - 1;
        }
        // Sample interval of the record (s), from the bins.
        double dt = Median(bins.Where(b => b.SamplesKept > 2).Select(b => (b.End - b.Start) / (b.SamplesKept - 1)).ToArray());
        var points = new List<RampPoint>();
        var references = new List<RampPoint>();
        RampPoint? Gather(int window, int sweep, double speed, (double Mean, long Samples) bias, IEnumerable<SegmentStatistics> bins, bool byBin)
        {
            SegmentStatistics[] members = bins.OrderBy(b => b.Start).ToArray();
            int n = members.Sum(b => b.SamplesKept);
            if (n < 3) return null;
            double mean = members.Sum(b => b.Mean * b.SamplesKept) / n;
            double reading = members.Sum(b => b.Piezo * b.SamplesKept) / n;
            // Moments of the true readings: the bins' means about the window's, and the motion within each bin (n_k
            // samples spaced u dt).
            double spacing = Math.Abs(speed) * dt;
            ReadingMoments moments = ReadingMoments.OfBins(members.Select(b => (b.Piezo - reading, b.SamplesKept, spacing)));
            WindowPart[]? parts = byBin
                ? members.Where(b => b.SamplesKept > 0).Select(b => new WindowPart(b.Piezo, ReadingMoments.OfBins([(0.0, b.SamplesKept, spacing)]), (double)b.SamplesKept / n)).ToArray()
                : null;
            return new RampPoint(window, sweep, members.Sum(b => b.MeanTime * b.SamplesKept) / n, reading, moments, speed,
                bias.Mean, mean, segments.Noise.SigmaOfMean(n), n, members[0].Start, members[^1].End, bias.Samples, parts);
        }
        for (int sw = 0; sw < sweeps.Count; sw++)
        {
            List<SegmentStatistics> sweep = sweeps[sw];
            double speed = Speed(sweep);
            long samples = sweep.Sum(b => (long)b.SamplesKept);
            (double, long) bias = (sweep.Sum(b => b.Bias * b.SamplesKept) / samples, samples);
            foreach (var window in sweep.Where(b => Measured(b.Piezo)).GroupBy(b => WindowOf(b.Piezo)))
                if (Gather(window.Key, sw, speed, bias, window, false) is { } point) points.Add(point);
            if (Gather(-1, sw, speed, bias, sweep.Where(b => !Measured(b.Piezo)), true) is { } reference) references.Add(reference);
        }
        // Correlated noise between windows of one sweep that lie within the noise's summation window of each other.
        var correlated = new List<(int, int, double)>();
        for (int i = 0; i < points.Count; i++)
            for (int l = i + 1; l < points.Count && points[l].Sweep == points[i].Sweep; l++)
            {
                (RampPoint a, RampPoint b) = points[l].FirstTime > points[i].FirstTime ? (points[i], points[l]) : (points[l], points[i]);
                int gap = Math.Max(0, (int)Math.Round((b.FirstTime - a.LastTime) / dt) - 1);
                if (gap >= segments.Noise.Window) continue;
                double cov = segments.Noise.CovarianceOfMeans(a.Samples, gap, b.Samples);
                if (cov != 0) correlated.Add((i, l, cov / (points[i].Sigma * points[l].Sigma)));
            }
        (double lag, double lagSigma) = Lag(points, sweeps);
        return new RampWindowSet(points.ToArray(), correlated.ToArray(), lag, lagSigma, references.ToArray(), dt);
    }

    // Window edges in depth (bins): widths w0 g^i from w0 = 2 bins, g chosen so that TargetWindows windows span the
    // range (uniform two-bin windows when the range is short).
    private static long[] Edges(long range)
    {
        const double first = 2;
        double growth = 1;
        if (range > TargetWindows * first)
        {
            double lo = 1, hi = 2;
            while (first * (Math.Pow(hi, TargetWindows) - 1) / (hi - 1) < range) hi *= 2;
            for (int it = 0; it < 100; it++)
            {
                double mid = (lo + hi) / 2;
                if (first * (Math.Pow(mid, TargetWindows) - 1) / (mid - 1) < range) lo = mid; else hi = mid;
            }
            growth = (lo + hi) / 2;
        }
        var edges = new List<long> { 0 };
        double width = first;
        while (edges[^1] < range)
        {
            edges.Add(edges[^1] + Math.Max(1, (long)Math.Round(width)));
            width *= growth;
        }
        edges.RemoveAt(edges.Count - 1); // the last edge is the end of the range, not the start of a window
        return edges.ToArray();
    }

    // Reading speed of a sweep: least-squares slope of the bins' mean reading against their mean time.
    private static double Speed(List<SegmentStatistics> sweep)
    {
        if (sweep.Count < 2) return 0;
        double tm = sweep.Average(b => b.MeanTime), pm = sweep.Average(b => b.Piezo), stt = 0, stp = 0;
        foreach (SegmentStatistics b in sweep)
        {
            stt += (b.MeanTime - tm) * (b.MeanTime - tm);
            stp += (b.MeanTime - tm) * (b.Piezo - pm);
        }
        return stt > 0 ? stp / stt : 0;
    }

    // The lag from each bias's approach and retract at the same window: A − R = −tau (u_A − u_R) dM/dr to first order,
    // with dM/dr from the neighbouring windows of their mean (A + R)/2; tau by weighted least squares, its sigma scaled
    // by the Birge ratio when the scatter exceeds the noise (the free signal's walk between the two sweeps adds some).
    private static (double Tau, double Sigma) Lag(List<RampPoint> points, List<List<SegmentStatistics>> sweeps)
    {
        double shh = 0, shd = 0, sdd = 0;
        int pairs = 0;
        for (int sw = 0; sw + 1 < sweeps.Count; sw++)
        {
            if (sweeps[sw][0].Kind == sweeps[sw + 1][0].Kind || Math.Abs(sweeps[sw][0].Bias - sweeps[sw + 1][0].Bias) > 1e-3 * Math.Max(1, Math.Abs(sweeps[sw][0].Bias)) + 1e-6) continue;
            var a = points.Where(p => p.Sweep == sw).ToDictionary(p => p.Window);
            var r = points.Where(p => p.Sweep == sw + 1).ToDictionary(p => p.Window);
            int[] common = a.Keys.Where(r.ContainsKey).Order().ToArray();
            for (int k = 1; k + 1 < common.Length; k++)
            {
                int w = common[k], below = common[k - 1], above = common[k + 1];
                double Mean(int window) => (a[window].Signal + r[window].Signal) / 2;
                double Reading(int window) => (a[window].Piezo + r[window].Piezo) / 2;
                double slope = (Mean(above) - Mean(below)) / (Reading(above) - Reading(below));
                double h = -(a[w].Speed - r[w].Speed) * slope;
                double d = a[w].Signal - r[w].Signal;
                double weight = 1 / (a[w].Sigma * a[w].Sigma + r[w].Sigma * r[w].Sigma);
                if (!double.IsFinite(h) || !double.IsFinite(weight)) continue;
                shh += weight * h * h;
                shd += weight * h * d;
                sdd += weight * d * d;
                pairs++;
            }
        }
        if (pairs < 3 || !(shh > 0)) return (0, 0);
        double tau = shd / shh;
        double chi2 = sdd - shd * shd / shh;
        double birge = Math.Sqrt(Math.Max(1, chi2 / (pairs - 1)));
        return (tau, birge / Math.Sqrt(shh));
    }

    private static double Median(double[] values)
    {
        if (values.Length == 0) return 0;
        Array.Sort(values);
        return values[values.Length / 2];
    }
}
