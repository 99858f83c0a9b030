using System.Collections.Concurrent;
using ForceFit.Core.Problems;
using ForceFit.Core.Units;
using ForceFit.Fitting;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Analysis.Theory;
using ForceFit.Theory.Electrostatics;

namespace ForceFit.Analysis.Reduction;

/// <summary>The physical constants a run's reduction depends on (SI), varied one at a time for the systematic budget.</summary>
/// <param name="Scale">Piezo scale s.</param>
/// <param name="Radius">Sphere radius R.</param>
/// <param name="Amplitude">Oscillation amplitude A (frequency mode).</param>
/// <param name="SpringConstant">k when given, else null (fitted).</param>
/// <param name="Sensitivity">m when given, else null (fitted or from k).</param>
/// <param name="ReferenceCasimir">Each of the settings' theories' Casimir force gradient (frequency mode) or force
/// (deflection) at a gap, felt by the reference steps; null when no theory is given (reference steps then taken as force-free).</param>
/// <param name="ReferenceCasimirScale">Factor on it (1; varied for its systematic).</param>
/// <param name="Lag">Mean delay of the recorded signal's first-order lag (s; distance-ramps, measured).</param>
/// <param name="LagStep">The time step of that filter (s): the delay's variance is Lag (Lag + LagStep)
/// (<see cref="LaggedWindow.Rule"/>); the sample interval for a filter run once per sample, 0 for a continuous one.</param>
/// <param name="ReferencePotentialShift">Added to V0 at the reference gap where it is measured from reference steps at
/// several biases (0; varied for its systematic).</param>
internal sealed record RunConstants(double Scale, double Radius, double Amplitude, double? SpringConstant, double? Sensitivity,
    ReferenceCasimirCurve? ReferenceCasimir = null, double ReferenceCasimirScale = 1, double Lag = 0, double ReferencePotentialShift = 0,
    double LagStep = 0);

/// <summary>
/// Reduces one run's steps (voltage-steps) or gap bins gathered into windows (distance-ramps, see
/// <see cref="RampWindows"/>) to a calibrated force gradient or force per piezo position
/// (physics.md): free signal f0(t) or S_free(t) from reference steps; the signal turned into the linear observable
/// y = 1 − (f/f0)^2 = F'_eff/k or u = S − S_free = −F/(k m); a bias parabola per position; the electrostatic
/// calibration of z0 and k (and m); the amplitude correction; and every error propagated linearly from the steps'
/// covariance (noise, shared reference errors, random walk of the free signal) through the whole chain.
/// </summary>
public static class RunReducer
{
    private const int OuterIterations = 3, MaxOuterIterations = 40;

    /// <summary>Reduces one run; throws <see cref="InputException"/> when the data cannot give a calibration.</summary>
    public static RunResult Reduce(RunSegments segments)
    {
        RunSettings run = segments.Run;
        var warnings = new List<string>();
        Prepared prepared = Prepare(segments, warnings);
        var nominal = Constants(run) with { Lag = prepared.Lag, LagStep = prepared.SampleInterval };
        Core core = Compute(prepared, nominal, null, warnings);
        var sources = new List<SystematicSource> { core.CalibrationSource };
        void Vary(string name, Func<RunConstants, double, RunConstants> with, double sigma, bool shared)
        {
            if (!(sigma > 0)) return;
            Core up = Compute(prepared, with(nominal, +sigma), core, null);
            Core down = Compute(prepared, with(nominal, -sigma), core, null);
            sources.Add(Difference(name, core, up, down, shared) with { Step = sigma });
        }
        // The piezo scale is the same physical piezo for every run of a night: a shared systematic, varied by its stated
        // sigma with z0 and k refitted (fitting it per run with its statement as a prior would count the prior once per run
        // when the runs are combined, and the data of one run barely constrain it).
        Vary("piezo scale", (c, d) => c with { Scale = c.Scale + d }, run.Piezo.Scale.Sigma, true);
        Vary("radius", (c, d) => c with { Radius = c.Radius + d }, run.Theory.Sphere.Radius.Sigma, true);
        if (run.Instrument.Mode == InstrumentMode.FrequencyShift)
            Vary("amplitude", (c, d) => c with { Amplitude = Math.Max(0, c.Amplitude + d) }, run.Instrument.Amplitude.Sigma, true);
        if (nominal.ReferenceCasimir is not null)
            Vary("reference-gap Casimir force", (c, d) => c with { ReferenceCasimirScale = 1 + d }, ReferenceCasimirRelativeSigma(nominal.ReferenceCasimir, core), true);
        if (core.ReferencePotential is { } v0Reference)
            Vary("V0 at the reference gap", (c, d) => c with { ReferencePotentialShift = d }, v0Reference.StatisticalSigma, false);
        // Whether the signal's filter runs once per sample (the nominal) or continuously changes the delay's variance
        // from L (L + dt) to L^2 (LaggedWindow.Rule): varied by one sample interval either way.
        if (prepared.Lag != 0) Vary("signal filter step", (c, d) => c with { LagStep = c.LagStep + d }, prepared.SampleInterval, false);
        if (run.Instrument.SpringConstant is { } k) Vary("spring constant (given)", (c, d) => c with { SpringConstant = k.Value + d }, k.Sigma, false);
        if (run.Instrument.DeflectionSensitivity is { } m) Vary("deflection sensitivity (given)", (c, d) => c with { Sensitivity = m.Value + d }, m.Sigma, false);

        Estimate Total(double value, double statistical, Func<SystematicSource, double[]> part) =>
            new(value, Math.Sqrt(statistical * statistical + sources.Skip(1).Sum(s => part(s).Sum(v => v * v))), statistical);
        var calibration = core.Calibration with
        {
            GapOffset = Total(core.Calibration.GapOffset.Value, core.Calibration.GapOffset.StatisticalSigma, s => s.GapOffset),
            SpringConstant = Total(core.Calibration.SpringConstant.Value, core.Calibration.SpringConstant.StatisticalSigma, s => s.SpringConstant),
            Sensitivity = core.Calibration.Sensitivity is { } sens ? Total(sens.Value, sens.StatisticalSigma, s => s.Sensitivity) : null,
            PiezoScale = new Estimate(run.Piezo.Scale.Value, run.Piezo.Scale.Sigma, 0),
        };
        // Compute wrote the nominal pass's warnings into this list already (core.Warnings is the same list).
        return new RunResult(run.Name, calibration, core.Positions, core.Separation, core.Value, core.PointTime, core.RandomCovariance, sources,
            core.Track, core.ResidualPotentialCovariance, core.AmplitudeCorrection, warnings)
        {
            ReferenceGap = core.ReferenceGaps.Length > 0 ? core.ReferenceGaps.Average() : double.NaN,
        };
    }

    private static RunConstants Constants(RunSettings run) => new(
        run.Piezo.Scale.Value, run.Theory.Sphere.Radius.Value, run.Instrument.Mode == InstrumentMode.FrequencyShift ? run.Instrument.Amplitude.Value : 0,
        run.Instrument.SpringConstant?.Value, run.Instrument.DeflectionSensitivity?.Value, ReferenceCasimir(run));

    // The reference steps are not force-free: at a few micrometres the Casimir gradient is still ~1e-4 of its value at
    // 1 um, which biases f0 (or S_free) and hence every far point. It is taken from the settings' theories — their mean,
    // which reduces the dependence on which one is right — at the reference gap of each pass.
    // The runs of a night share their theory settings, so the curve (tabulated as the fits ask) is shared too.
    private static ReferenceCasimirCurve? ReferenceCasimir(RunSettings run)
    {
        if (run.Theory.Theories.Count == 0) return null;
        bool frequency = run.Instrument.Mode == InstrumentMode.FrequencyShift;
        string key = $"{(frequency ? "gradient" : "force")}\n{TheoryModels.Fingerprint(run.Theory)}";
        return CasimirCurves.GetOrAdd(key, _ => new Lazy<ReferenceCasimirCurve>(() =>
        {
            IReadOnlyList<PreparedTheory> theories = TheoryModels.Prepare(run.Theory);
            return new ReferenceCasimirCurve(a => theories.Select(t => { TheoryRow row = t.At(a); return frequency ? row.ForceGradient : row.Force; }).ToArray());
        })).Value;
    }

    private static readonly ConcurrentDictionary<string, Lazy<ReferenceCasimirCurve>> CasimirCurves = new();

    // The settings' theories' mean as the carrier of the data's curve shape (CurveShape), when there are theories.
    private static Func<double, (double, double, double)>? Carrier(RunConstants c) => c.ReferenceCasimir is { } theories ? theories.MeanWithDerivatives : null;

    // Its relative uncertainty: half the spread of the theories at the mean reference gap (the models differ most in the
    // thermal regime), or 20% with a single theory (our choice, stated in the report).
    private static double ReferenceCasimirRelativeSigma(ReferenceCasimirCurve theories, Core core)
    {
        double[] gaps = core.ReferenceGaps;
        if (gaps.Length == 0) return 0;
        double[] values = theories.PerTheory(gaps.Average());
        if (values.Length < 2) return 0.2;
        double mean = values.Average();
        return mean == 0 ? 0 : (values.Max() - values.Min()) / 2 / Math.Abs(mean);
    }

    // The one-sigma effect of a constant by central differences of the whole reduction at fixed separations.
    private static SystematicSource Difference(string name, Core nominal, Core up, Core down, bool shared)
    {
        int n = nominal.Value.Length;
        var row = new double[n];
        for (int i = 0; i < n; i++)
        {
            // Value at the nominal separation: shift along the local slope by the change of the separation.
            double Moved(Core c) => c.Value[i] - nominal.Slope[i] * (c.Separation[i] - nominal.Separation[i]);
            row[i] = (Moved(up) - Moved(down)) / 2;
        }
        double Half(Func<Core, double> f) => (f(up) - f(down)) / 2;
        // The reported V0 slope moves too: the separations move with the constants (the piezo scale stretches them).
        double Trend(Core c) => c.Positions.Length >= 2 ? ResidualPotentialTrend(c.Positions, c.ResidualPotentialCovariance, c.Calibration.ResidualPotentialDrift).Line.Parameters[1] : 0;
        return new SystematicSource(name, [row], [Half(c => c.Calibration.GapOffset.Value)], [Half(c => c.Calibration.SpringConstant.Value)],
            [nominal.Calibration.Sensitivity is null ? 0 : Half(c => c.Calibration.Sensitivity!.Value)], shared) { ResidualPotentialSlope = Half(Trend) };
    }

    /// <summary>Everything computed for one set of constants.</summary>
    private sealed record Core(RunCalibration Calibration, PositionFit[] Positions, double[] Separation, double[] Value, double[] Slope, double[] PointTime,
        double[,] RandomCovariance, SystematicSource CalibrationSource, FreeSignalTrack Track, double[,] ResidualPotentialCovariance,
        double[] AmplitudeCorrection, CurveShape Shape, IReadOnlyList<string> Warnings)
    {
        /// <summary>The reference steps' gaps at the final calibration (m).</summary>
        public double[] ReferenceGaps { get; init; } = [];

        /// <summary>How the free-signal track moves with z0 and the constant (null when it is not rebuilt from references).</summary>
        public TrackSensitivity? Sensitivity { get; init; }

        /// <summary>V0 at the reference gap measured from reference steps at several biases, else null (extrapolated along the V0 line).</summary>
        public Estimate? ReferencePotential { get; init; }

        /// <summary>The calibration fit's parameters (the start of a systematic variation).</summary>
        public double[] Parameters { get; init; } = [];

        /// <summary>The last pass (the basis a systematic variation rebuilds its free signal from).</summary>
        public State? Final { get; init; }
    }

    /// <summary>A step ready for fitting.</summary>
    /// <param name="Time">Mean time of the kept samples (s).</param>
    /// <param name="Piezo">Recorded piezo reading (m): the position's mean once grouped.</param>
    /// <param name="Bias">Mean recorded bias (V).</param>
    /// <param name="Signal">Mean signal.</param>
    /// <param name="SignalSigma">Its uncertainty from the correlated-noise model.</param>
    /// <param name="Samples">Samples kept.</param>
    /// <param name="BiasSigma">Uncertainty of the step's mean recorded bias (readout noise / sqrt(samples)), shared by the
    /// points of its bias group.</param>
    /// <param name="PiezoSigma">Uncertainty of the position's mean recorded piezo reading, shared by its steps.</param>
    /// <param name="Moments">Central moments of the true readings the point averages over (ramp windows, else zero).</param>
    /// <param name="Speed">Reading speed while it was recorded (m/s; ramp windows, else 0).</param>
    /// <param name="BiasGroup">Points with the same group share one mean recorded bias (a ramp's sweep); −1 for a step's own.</param>
    private sealed record StepPoint(double Time, double Piezo, double Bias, double Signal, double SignalSigma, int Samples, double BiasSigma = 0, double PiezoSigma = 0,
        ReadingMoments Moments = default, double Speed = 0, int BiasGroup = -1);

    /// <summary>A run's points, grouped by position, with what the passes share.</summary>
    /// <param name="Segments">The run's steps or bins as read.</param>
    /// <param name="Steps">The points of usable positions.</param>
    /// <param name="Groups">Each position's points, positions ordered by reading.</param>
    /// <param name="References">Reference steps (the free signal).</param>
    /// <param name="Correlated">Pairs of points with correlated noise (ramp windows of one sweep), with the correlation.</param>
    /// <param name="PiezoShared">True when a position's points share one mean reading (voltage steps), so its readout error is common.</param>
    /// <param name="Lag">The signal's lag time measured from the ramps (s), 0 for steps: the start of its fit.</param>
    /// <param name="SampleInterval">The record's sample interval (s; ramps, else 0).</param>
    private sealed record Prepared(RunSegments Segments, StepPoint[] Steps, int[][] Groups, ReferencePoint[] References, (int I, int L, double Rho)[] Correlated,
        bool PiezoShared, double Lag, double SampleInterval);

    private static Prepared Prepare(RunSegments segments, List<string> warnings)
    {
        RunSettings run = segments.Run;
        var references = segments.Segments.Where(s => s.Kind == SegmentKind.Reference)
            .Select(r => new ReferencePoint(r.MeanTime, r.Piezo, r.Bias, r.Mean, r.Sigma)).ToArray();
        if (run.Protocol == Protocol.DistanceRamps) return PrepareRamps(segments, references, warnings);
        var steps = segments.Segments.Where(s => s.Kind == SegmentKind.Step).Select(s => new StepPoint(s.MeanTime, s.Piezo, s.Bias, s.Mean, s.Sigma, s.SamplesKept,
            segments.Thresholds.BiasNoise / Math.Sqrt(s.SamplesKept))).ToArray();
        int[][] groups = Positions(steps, segments.Thresholds, run, warnings);
        // Keep only the steps of usable positions, re-indexed.
        int[] usedSteps = groups.SelectMany(g => g).Order().ToArray();
        var newIndex = new Dictionary<int, int>();
        for (int i = 0; i < usedSteps.Length; i++) newIndex[usedSteps[i]] = i;
        steps = usedSteps.Select(i => steps[i]).ToArray();
        groups = groups.Select(g => g.Select(i => newIndex[i]).ToArray()).ToArray();
        // The commanded piezo is constant at a position: every step gets the position's mean recorded reading, whose
        // readout error (noise / sqrt(all its samples)) is shared by the position's steps.
        foreach (int[] members in groups)
        {
            long total = members.Sum(i => (long)steps[i].Samples);
            double mean = members.Sum(i => steps[i].Piezo * steps[i].Samples) / total;
            double sigma = segments.Thresholds.PiezoNoise / Math.Sqrt(total);
            foreach (int i in members) steps[i] = steps[i] with { Piezo = mean, PiezoSigma = sigma };
        }
        return new Prepared(segments, steps, groups, references, [], true, 0, 0);
    }

    // Ramps: one point per sweep and window (RampWindows); a window is a position when it holds at least three
    // distinct biases. Each point keeps its own mean reading (its readout error is its own).
    // The references are the holds and each sweep's part beyond reference_beyond (at both ends of every bias's sweeps).
    private static Prepared PrepareRamps(RunSegments segments, ReferencePoint[] holds, List<string> warnings)
    {
        RampWindowSet set = RampWindows.Build(segments);
        var references = holds.Concat(set.References.Select(r => new ReferencePoint(r.Time, r.Piezo, r.Bias, r.Signal, r.Sigma, r.Moments, r.Speed, r.Parts)))
            .OrderBy(r => r.MeanTime).ToArray();
        StepThresholds t = segments.Thresholds;
        var byWindow = Enumerable.Range(0, set.Points.Length).GroupBy(i => set.Points[i].Window).OrderBy(g => g.Key).ToArray();
        var keep = new List<int[]>();
        foreach (var window in byWindow)
        {
            int distinct = DistinctBiases(window.Select(i => set.Points[i].Bias), t.Bias);
            if (distinct >= 3) keep.Add(window.ToArray());
            else warnings.Add($"{segments.Run.DataFile}: the ramp window at piezo {set.Points[window.First()].Piezo * 1e9:F1} nm has {distinct} distinct bias(es); a parabola needs three, so it was left out");
        }
        int[] used = keep.SelectMany(g => g).Order().ToArray();
        var newIndex = new Dictionary<int, int>();
        for (int i = 0; i < used.Length; i++) newIndex[used[i]] = i;
        var steps = used.Select(i => set.Points[i]).Select(p => new StepPoint(p.Time, p.Piezo, p.Bias, p.Signal, p.Sigma, p.Samples,
            t.BiasNoise / Math.Sqrt(p.BiasSamples), t.PiezoNoise / Math.Sqrt(p.Samples), p.Moments, p.Speed, p.Sweep)).ToArray();
        // Positions ordered by reading, as for steps.
        int[][] groups = keep.Select(g => g.Select(i => newIndex[i]).OrderBy(i => steps[i].Time).ToArray()).OrderBy(g => g.Average(i => steps[i].Piezo)).ToArray();
        var correlated = set.Correlated.Where(c => newIndex.ContainsKey(c.I) && newIndex.ContainsKey(c.L)).Select(c => (newIndex[c.I], newIndex[c.L], c.Rho)).ToArray();
        if (set.LagSigma == 0)
            warnings.Add($"{segments.Run.DataFile}: the signal's lag could not be measured (no approach and retract at the same bias); taken as zero");
        return new Prepared(segments, steps, groups, references, correlated, false, set.Lag, set.SampleInterval);
    }

    private static Core Compute(Prepared prepared, RunConstants c, Core? start, List<string>? warnings)
    {
        RunSegments segments = prepared.Segments;
        RunSettings run = segments.Run;
        bool frequency = run.Instrument.Mode == InstrumentMode.FrequencyShift;
        StepPoint[] steps = prepared.Steps;
        int[][] groups = prepared.Groups;
        ReferencePoint[] references = prepared.References;
        if (groups.Length < 3)
            throw new InputException(new Problem(run.DataFile, null, run.Protocol == Protocol.DistanceRamps
                ? $"only {groups.Length} ramp window(s) with at least three biases (from {segments.Segments.Count(s => s.Kind is SegmentKind.Approach or SegmentKind.Retract)} gap bins): the calibration needs three or more; does the piezo sweep while the bias holds?"
                : $"only {groups.Length} piezo position(s) with at least three biases: the calibration needs three or more"));
        // The global fit's unknowns: V0 and the bias-free value of every position, z0, k (or k m and m) and two drifts.
        int unknowns = 2 * groups.Length + 4 + (frequency ? 0 : 1);
        int used = groups.Sum(g => g.Length);
        if (used < unknowns)
            throw new InputException(new Problem(run.DataFile, null,
                $"{used} steps at {groups.Length} positions cannot determine the calibration's {unknowns} unknowns (V0 and the bias-free value of every position, z0, k, the gap and V0 drifts): record more biases per position or more positions"));
        Measurement? givenFree = frequency ? run.Instrument.FreeFrequency : run.Instrument.DeflectionFree;
        if (givenFree is null && references.Length == 0)
            throw new InputException(new Problem(run.RunFile, null,
                $"[instrument] reference_beyond: no reference steps beyond {(run.Instrument.ReferenceBeyond is { } rb ? (rb.Value * 1e9).ToString("G6", System.Globalization.CultureInfo.InvariantCulture) + " nm" : "'reference_beyond'")}: the free {(frequency ? "frequency" : "deflection signal")} cannot be found; give reference steps or state '{(frequency ? "free_frequency" : "deflection_free")}'"));
        var electrostatics = ElectrostaticTable.For(c.Radius);
        int sign = run.Piezo.Sign;
        // A variation of the constants starts from the nominal reduction's free signal and curve shape: one pass.
        FreeSignalTrack track = start?.Track ?? (givenFree is { } g ? FreeSignalTrack.Given(g.Value, g.Sigma) : FreeSignalTrack.FromReferences(
            references.Select(r => new FreeSignalPoint(r.MeanTime, r.Mean, r.Sigma)).ToArray()));
        CurveShape? shape = start?.Shape;
        State state = default!;
        // Passes alternate the calibration fit and the free signal rebuilt from the references corrected with it, until
        // z0, the instrument constant and m move by less than 2% of their statistical sigmas (at least three passes for
        // the nominal reduction, which also refines the curve shape, and at most 40: shape and track converge
        // geometrically, by about 0.6 per pass in noise-free deflection steps, where z0 was 134 pm off after 3 passes, 4 pm
        // after 10 and below 0.001 pm after 30; with noise the 2% rule stops far earlier). Every constant moves the reference correction (the
        // piezo scale moves a reference gap of 2 um by 10 nm per 0.5%, which in deflection mode moves S_free by far more
        // than its noise), so a variation rebuilds f0(t) with its constants about the nominal calibration first, and the
        // fit carries the track's dependence on z0 and the instrument constant: for voltage steps one pass is then
        // self-consistent to first order in the variation's move (against iterating to the 2% rule, measured: every
        // systematic row within 2.5% of its rms). Ramps, whose references also carry the lag, take a second pass (one
        // pass moved the radius row by a quarter of its rms).
        bool rebuilds = givenFree is null;
        int variationPasses = rebuilds && run.Protocol == Protocol.DistanceRamps ? 2 : 1;
        int minPasses = start is null ? OuterIterations : variationPasses;
        int maxPasses = start is null || (rebuilds && variationPasses > 1) ? MaxOuterIterations : minPasses;
        Estimate? referencePotential = null;
        State? previous = null;
        // The V0 slope against separation the model uses within positions: the previous pass's (0 at the very start).
        double v0Slope = start is null ? 0 : ResidualPotentialSlope(start.Positions, start.ResidualPotentialCovariance, start.Calibration);
        // The free signal rebuilt from the references corrected with a calibration basis (its z0 and constant).
        (FreeSignalTrack Track, Estimate? ReferenceV0) TrackFrom(State basis, double slope)
        {
            // V0 at each reference's gap: measured at their mean gap a0 and carried along the run's V0 slope (references
            // from 1.6 to 2 um differ by ~0.4 mV at 2 mV/um), else the positions' V0 line extrapolated.
            double a0 = references.Average(r => ReferenceGap(r, basis, c, sign));
            Estimate? v0Reference = ReferencePotential(references, basis, c, electrostatics, sign, frequency, a0, slope);
            Func<double, double> v0At = v0Reference is { } measured ? a => measured.Value + slope * (a - a0) : ResidualPotentialAlong(basis);
            return (FreeSignalTrack.FromReferences(references.Select(r => new FreeSignalPoint(r.MeanTime,
                CorrectedReference(r, basis, c, electrostatics, sign, frequency, v0At), r.Sigma)).ToArray()), v0Reference);
        }
        // The track as corrected with a basis, and how it moves with that basis's z0 and constant.
        TrackSensitivity Around(State basis, double slope) =>
            new((z0, kappa) => TrackFrom(basis with { GapOffset = z0, Kappa = kappa }, slope).Track, basis.GapOffset, basis.Kappa);
        TrackSensitivity? sensitivity = start?.Sensitivity;
        if (rebuilds && start?.Final is { } nominalBasis)
        {
            (track, referencePotential) = TrackFrom(nominalBasis, v0Slope);
            sensitivity = Around(nominalBasis, v0Slope);
        }
        for (int outer = 0; ; outer++)
        {
            state = GlobalPass(prepared, track, c, electrostatics, sign, shape, frequency, outer == 0 ? start?.Parameters : state.Parameters, variation: start is not null, v0Slope, sensitivity);
            v0Slope = ResidualPotentialSlope(state.Positions, state.ResidualPotentialCovariance, state.Calibration);
            shape = state.Shape;
            // Settled: z0, the constant and (deflection) m each moved by less than 2% of its statistical sigma, or by
            // less than a floor far below any measurement (1 fm; 1e-10 relative) when the data are nearly noise-free.
            bool Still(double now, double before, double sigma, double floor) => Math.Abs(now - before) < Math.Max(0.02 * sigma, floor);
            RunCalibration cal = state.Calibration;
            bool settled = previous is not null
                && Still(state.GapOffset, previous.GapOffset, cal.GapOffset.StatisticalSigma, 1e-15)
                && Still(state.Kappa, previous.Kappa, Math.Abs(state.Kappa) * cal.SpringConstant.StatisticalSigma / cal.SpringConstant.Value, 1e-10 * Math.Abs(state.Kappa))
                && (cal.Sensitivity is not { } sens || Still(state.Sensitivity, previous.Sensitivity, sens.StatisticalSigma, 1e-10 * Math.Abs(state.Sensitivity)));
            if (outer + 1 >= maxPasses || (outer + 1 >= minPasses && settled)) break;
            if (!rebuilds) { previous = state; continue; }
            (track, referencePotential) = TrackFrom(state, v0Slope);
            // The track depends on the calibration it was corrected with: the next fit sees that dependence (to first
            // order in z0 and the constant about this basis), so that f0(t) or S_free(t) and the calibration are
            // fitted consistently and the calibration's uncertainty carries the reference correction's.
            sensitivity = Around(state, v0Slope);
            previous = state;
        }
        if (warnings is not null)
        {
            if (!state.Calibration.Converged)
                warnings.Add($"{run.Name}: the electrostatic calibration did not converge ({state.Calibration.Stop}); its results cannot be trusted");
            else if (state.Calibration.DegreesOfFreedom > 0 && state.Calibration.PValue < 1e-3)
                warnings.Add($"{run.Name}: the electrostatic calibration fits poorly (chi2 = {state.Calibration.ChiSquare:F1} for {state.Calibration.DegreesOfFreedom} degrees of freedom, p = {state.Calibration.PValue:G2})");
        }
        return state.ToCore(track, warnings ?? []) with
        {
            ReferenceGaps = references.Select(r => ReferenceGap(r, state, c, sign)).ToArray(), ReferencePotential = referencePotential, Sensitivity = sensitivity,
            Final = state,
        };
    }

    /// <summary>The outcome of one pass.</summary>
    private sealed record State(RunCalibration Calibration, PositionFit[] Positions, double[] Separation, double[] Value, double[] Slope,
        double[] PointTime, double[,] RandomCovariance, SystematicSource CalibrationSource, double[,] ResidualPotentialCovariance, double[] AmplitudeCorrection,
        CurveShape Shape, double GapOffset, double Kappa, double Sensitivity, double[] Parameters)
    {
        public Core ToCore(FreeSignalTrack track, IReadOnlyList<string> warnings) => new(Calibration, Positions, Separation, Value, Slope, PointTime,
            RandomCovariance, CalibrationSource, track, ResidualPotentialCovariance, AmplitudeCorrection, Shape, warnings) { Parameters = Parameters };
    }

    // The number of distinct biases among values: sorted, a new one wherever the next is more than the threshold above.
    private static int DistinctBiases(IEnumerable<double> values, double threshold)
    {
        double[] biases = values.Order().ToArray();
        return biases.Length == 0 ? 0 : 1 + Enumerable.Range(1, biases.Length - 1).Count(k => biases[k] - biases[k - 1] > threshold);
    }

    // Groups the steps by piezo reading (readings closer than the step threshold are one position) and keeps the
    // positions with at least three distinct biases; positions ordered by reading.
    private static int[][] Positions(StepPoint[] steps, StepThresholds thresholds, RunSettings run, List<string>? warnings)
    {
        int[] order = Enumerable.Range(0, steps.Length).OrderBy(i => steps[i].Piezo).ToArray();
        var groups = new List<List<int>>();
        foreach (int i in order)
        {
            if (groups.Count == 0 || steps[i].Piezo - steps[groups[^1][^1]].Piezo > thresholds.Piezo) groups.Add([]);
            groups[^1].Add(i);
        }
        var kept = new List<int[]>();
        foreach (List<int> group in groups)
        {
            int distinct = DistinctBiases(group.Select(i => steps[i].Bias), thresholds.Bias);
            if (distinct >= 3) kept.Add(group.OrderBy(i => steps[i].Time).ToArray());
            else warnings?.Add($"{run.DataFile}: the position at piezo {steps[group[0]].Piezo * 1e9:F1} nm has {distinct} distinct bias(es); a parabola needs three, so it was left out");
        }
        return kept.ToArray();
    }

    /// <summary>The free-signal track rebuilt for other values of z0 and the constant (k, or k m), and the basis values the current track was built with.</summary>
    private sealed record TrackSensitivity(Func<double, double, FreeSignalTrack> For, double GapOffset, double Constant);

    /// <summary>A free-signal reference: a reference step, or a ramp's stretch beyond reference_beyond (with the moments
    /// and speed of its readings, as for ramp windows, and its bins, over which it is averaged one by one).</summary>
    private sealed record ReferencePoint(double MeanTime, double Piezo, double Bias, double Mean, double Sigma, ReadingMoments Moments = default,
        double Speed = 0, WindowPart[]? Parts = null);

    private static double CorrectedReference(ReferencePoint r, State s, RunConstants c, ElectrostaticTable e, int sign, bool frequency, Func<double, double> v0At)
    {
        // The reference gap still feels the electrostatic force of (V − V0(a_ref))^2, with V0 measured from the
        // references themselves where they have several biases (ReferencePotential), else extrapolated along its
        // fitted gap trend, and the Casimir force of the settings' theories (see ReferenceCasimir). A ramp's stretch is
        // averaged bin by bin, each bin's readings shifted back by the signal's lag (LaggedWindow.Rule).
        double Felt(double reading)
        {
            double undeflected = s.GapOffset + sign * c.Scale * reading, force = 0;
            // Deflection mode: the sphere rests closer by x = m u = −m F/kappa, a = g + m F/kappa (a fixed point; ~10 nm
            // at 2 um for the ramps' largest biases at k = 0.05 N/m, which moves E(a) by 0.5%).
            for (int pass = 0; pass < (frequency ? 1 : 4); pass++)
            {
                double a = frequency ? undeflected : undeflected + s.Sensitivity * force / s.Kappa;
                double dv = r.Bias - v0At(a);
                // Frequency mode: the oscillating sphere senses <F'> = F' + (A^2/8) F''' (physics.md; at micrometres A is
                // far below a/10), 3e-6 of this correction at 1.8 um for A = 2 nm.
                double casimir = 0;
                if (c.ReferenceCasimir is { } f)
                {
                    (double value, _, double second) = f.MeanWithDerivatives(a);
                    casimir = c.ReferenceCasimirScale * (frequency ? value + c.Amplitude * c.Amplitude / 8 * second : value);
                }
                if (!double.IsFinite(casimir)) casimir = 0;
                force = (frequency ? e.AveragedGradient(a, c.Amplitude) : e.Force(a)) * dv * dv + casimir;
            }
            return force;
        }
        // What the recorded signal averages, per unit of the free value: f/f0 = sqrt(1 − F'/k) (frequency; the mean of
        // f is taken, not of 1 − (f/f0)^2, which differs by the window's variance), or the force (deflection, linear).
        double Response(double reading) => frequency ? Math.Sqrt(1 - Felt(reading) / s.Kappa) : Felt(reading);
        double Averaged() => r.Parts is { } parts
            ? parts.Sum(part => part.Weight * LaggedWindow.Rule(part.Reading, part.Moments, r.Speed, c.Lag, c.LagStep).Apply(Response))
            : LaggedWindow.Rule(r.Piezo, r.Moments, r.Speed, c.Lag, c.LagStep).Apply(Response);
        double mean = r.Moments.Second == 0 && r.Speed == 0 ? Response(r.Piezo) : Averaged();
        // f_ref = f0 <sqrt(1 − (<G>(a)(V − V0)^2 + F'_Casimir(a)) / k)>  =>  f0 = f_ref / <sqrt(1 − y)>
        if (frequency) return double.IsFinite(mean) && mean > 0 ? r.Mean / mean : r.Mean;
        // S_ref = S_free + u with u = −(E(a)(V − V0)^2 + F_Casimir(a)) / (k m)
        double u = -mean / s.Kappa;
        return double.IsFinite(u) ? r.Mean - u : r.Mean;
    }

    private static double ReferenceGap(ReferencePoint r, State s, RunConstants c, int sign) => s.GapOffset + sign * c.Scale * r.Piezo;

    /// <summary>
    /// V0 at the references' mean gap a0 (V0 elsewhere along the run's slope) from reference steps at three or more
    /// distinct biases (the holds and far stretches of distance ramps), or null. Each reference's free signal, corrected with a trial V0 (CorrectedReference), must lie on one straight
    /// line in time; the V0 that makes it so is found by Gauss–Newton on [1, t, d free/d V0], its sigma scaled by the
    /// Birge ratio when the scatter exceeds the references' noise. Extrapolating the positions' V0 line would not do:
    /// for a force falling as 1/a the error of the reference's V0 shifts every position's V0 in proportion to its gap,
    /// exactly like a V0 gap trend, so the data could not tell the two apart.
    /// </summary>
    private static Estimate? ReferencePotential(ReferencePoint[] references, State s, RunConstants c, ElectrostaticTable e, int sign, bool frequency, double a0, double slope)
    {
        if (DistinctBiases(references.Select(r => r.Bias), 1e-3) < 3 || references.Length < 4) return null;
        double v0 = ResidualPotentialAlong(s)(a0);
        double tm = references.Average(r => r.MeanTime);
        FitResult fit = null!;
        // The references' errors: their own, plus the free signal's random walk about the fitted line in time, which
        // correlates the references of one bias (taken together) and so moves V0 with the walk: covariance
        // sigma_i^2 delta_ij + D^2 (min(t_i, t_j) − t_first), D^2 from the references as in the track.
        double[,]? covariance = null;
        for (int it = 0; it < 8; it++)
        {
            const double h = 1e-5; // V
            var design = new double[references.Length, 3];
            var y = new double[references.Length];
            for (int i = 0; i < references.Length; i++)
            {
                double trial = v0;
                double at = CorrectedReference(references[i], s, c, e, sign, frequency, a => trial + slope * (a - a0));
                double up = CorrectedReference(references[i], s, c, e, sign, frequency, a => trial + h + slope * (a - a0));
                design[i, 0] = 1;
                design[i, 1] = references[i].MeanTime - tm;
                design[i, 2] = (up - at) / h;
                y[i] = at;
            }
            covariance ??= ReferenceCovariance(references, y);
            fit = LinearLeastSquares.FitCorrelated(design, y, covariance);
            // at_i + d_i dv = b0 + b1 t_i  =>  at_i = b0 + b1 t_i − d_i dv: the fitted third coefficient is −dv.
            double step = -fit.Parameters[2];
            v0 += step;
            if (Math.Abs(step) < 1e-9) break;
        }
        double birge = fit.DegreesOfFreedom > 0 ? Math.Sqrt(Math.Max(1, fit.ChiSquare / fit.DegreesOfFreedom)) : 1;
        double sigma = Math.Sqrt(fit.Covariance[2, 2]) * birge;
        return new Estimate(v0 + c.ReferencePotentialShift, sigma, sigma);
    }

    private static double[,] ReferenceCovariance(ReferencePoint[] references, double[] values)
    {
        int n = references.Length;
        double first = references.Min(r => r.MeanTime);
        double diffusion = FreeSignalTrack.EstimateDiffusion(references.Select((r, i) => new FreeSignalPoint(r.MeanTime, values[i], r.Sigma)).OrderBy(p => p.Time).ToArray());
        var c = new double[n, n];
        for (int i = 0; i < n; i++)
        {
            for (int j = 0; j < n; j++) c[i, j] = diffusion * (Math.Min(references[i].MeanTime, references[j].MeanTime) - first);
            c[i, i] += references[i].Sigma * references[i].Sigma;
        }
        return c;
    }

    /// <summary>
    /// The weighted straight line V0(a) = b0 + b1 (a − a_nearest) through the positions' V0 values, with a_nearest the
    /// nearest position's separation: b0 is V0 there and b1 the slope against separation. With the V0 values' covariance
    /// (positions in index order) it is the generalised least-squares line, (X^T C^-1 X)^-1 X^T C^-1 v: the V0 values
    /// share errors (the V0 drift, the free signal, the calibration), which the diagonal weights alone would ignore.
    /// </summary>
    public static (FitResult Line, double NearestSeparation) ResidualPotentialLine(IReadOnlyList<PositionFit> positions, double[,]? covariance = null)
    {
        double nearest = positions.Min(p => p.Separation);
        if (covariance is null || covariance.GetLength(0) != positions.Count)
            return (LinearLeastSquares.Polynomial(positions.Select(p => p.Separation - nearest).ToArray(),
                positions.Select(p => p.ResidualPotential).ToArray(), 1, positions.Select(p => Math.Max(p.ResidualPotentialSigma, 1e-15)).ToArray()), nearest);
        int n = positions.Count;
        double[,] w = Matrices.InverseSymmetric(covariance);
        var x = positions.Select(p => p.Separation - nearest).ToArray();
        var v = positions.Select(p => p.ResidualPotential).ToArray();
        double s00 = 0, s01 = 0, s11 = 0, t0 = 0, t1 = 0;
        for (int i = 0; i < n; i++)
            for (int j = 0; j < n; j++)
            {
                s00 += w[i, j];
                s01 += w[i, j] * x[j];
                s11 += x[i] * w[i, j] * x[j];
                t0 += w[i, j] * v[j];
                t1 += x[i] * w[i, j] * v[j];
            }
        double det = s00 * s11 - s01 * s01;
        var p2 = new[,] { { s11 / det, -s01 / det }, { -s01 / det, s00 / det } };
        double b0 = p2[0, 0] * t0 + p2[0, 1] * t1, b1 = p2[1, 0] * t0 + p2[1, 1] * t1;
        var r = Enumerable.Range(0, n).Select(i => v[i] - b0 - b1 * x[i]).ToArray();
        return (new FitResult([b0, b1], p2, Matrices.Bilinear(r, w, r), n - 2, 1, StopReason.ParametersConverged), nearest);
    }

    /// <summary>
    /// The line of V0 against separation reported for a run: the positions' V0 with the calibration's fitted drift of V0
    /// in time taken out first, V0_j − w (t_j − t_nearest), and its uncertainty carried, sigma_w^2 (t_i − t_n)(t_j − t_n)
    /// added to the V0 values' covariance (physics.md: V0 against gap and against time); intercept at the nearest
    /// position (at its time). Voltage steps visit the gaps in time order, so the plain line's slope also held the time
    /// drift: 1 mV/h read as −0.11 mV/um, 35 of its sigmas in simulated nights. A V0_j is quoted at its position's mean
    /// time, so its correlation with w is left out.
    /// </summary>
    public static (FitResult Line, double NearestSeparation) ResidualPotentialTrend(IReadOnlyList<PositionFit> positions, double[,]? covariance, Estimate? drift)
    {
        int n = positions.Count;
        var total = new double[n, n];
        for (int i = 0; i < n; i++)
            for (int j = 0; j < n; j++)
                total[i, j] = covariance is not null && covariance.GetLength(0) == n ? covariance[i, j] : i == j ? Square(Math.Max(positions[i].ResidualPotentialSigma, 1e-15)) : 0;
        if (drift is not null && n > 0)
        {
            double tn = positions.MinBy(p => p.Separation)!.Time;
            positions = positions.Select(p => p with { ResidualPotential = p.ResidualPotential - drift.Value * (p.Time - tn) }).ToArray();
            for (int i = 0; i < n; i++)
                for (int j = 0; j < n; j++)
                    total[i, j] += drift.Sigma * drift.Sigma * (positions[i].Time - tn) * (positions[j].Time - tn);
        }
        return ResidualPotentialLine(positions, total);
    }

    // The slope of V0 against the actual gap that the model carries within a position: the positions' V0 line with the
    // fitted drift of V0 in time taken out first. Positions are stepped through the gaps in time order, so the plain
    // line's slope also holds the time drift (1 mV/h over ~80 s per 200 nm reads as −0.11 mV/um), and within a
    // position that wrong slope times the sphere's bias-driven deflection (up to ~20 nm at the far, high-bias
    // positions) shifted the deflection-mode vertices by ~2 uV (measured noise-free; 0.04 uV with the drift taken out).
    // The drift is taken out as in the reported line (ResidualPotentialTrend) but with its sigma left out of the weights.
    private static double ResidualPotentialSlope(PositionFit[] positions, double[,] covariance, RunCalibration calibration)
    {
        if (positions.Length < 3) return 0;
        Estimate? drift = calibration.ResidualPotentialDrift is { } w ? w with { Sigma = 0 } : null;
        return ResidualPotentialTrend(positions, covariance, drift).Line.Parameters[1] is var b && double.IsFinite(b) ? b : 0;
    }

    // V0 against gap along the positions' straight line, fitted once (for the reference correction only); with fewer
    // than three positions their mean.
    private static Func<double, double> ResidualPotentialAlong(State s)
    {
        if (s.Positions.Length < 3)
        {
            double mean = s.Positions.Average(p => p.ResidualPotential);
            return _ => mean;
        }
        (FitResult line, double nearest) = ResidualPotentialLine(s.Positions);
        double b0 = line.Parameters[0], b1 = line.Parameters[1];
        return a => b0 + b1 * (a - nearest);
    }

    // ---------------------------------------------------------------- the calibration fit (both modes)

    private static double Square(double x) => x * x;

    // Rows after the points in the joint output vector: z0, instrument constant (k, or kappa = k m in deflection
    // mode), m, gap drift v, V0 drift rate.
    private const int CalibrationRows = 5;

    /// <summary>
    /// One weighted least-squares fit of every step of the run (physics.md, electrostatic calibration):
    /// frequency mode  y_i = [C_j rho(a_i) + &lt;G&gt;(a_i) (V_i − V0_j(t_i))^2] / k,
    /// deflection mode u_i = −[C_j rho(a_i) + E(a_i) (V_i − V0_j(t_i))^2] / (k m),
    /// with the gap a_i = z0 + d s p_i + v (t_i − t_mid) (− m u_i in deflection mode: the sphere moves by x = m u),
    /// V0_j(t) = V0_j + w (t − t_j), G and E the exact sphere–plate gradient and force per V^2 (&lt;G&gt; averaged over
    /// the oscillation), C_j the bias-free value at position j and rho(a) = F_smooth(a)/F_smooth(a_j) its variation
    /// over the small gap changes within the position, taken from the smooth curve of the data. The piezo scale s is
    /// held at its stated value (its uncertainty is a systematic shared by the runs, see Reduce).
    /// A slow gap drift v and V0 drift w are fitted because at this precision both are visible within one position.
    /// </summary>
    private static State GlobalPass(Prepared prepared, FreeSignalTrack track, RunConstants c, ElectrostaticTable e, int sign,
        CurveShape? shape, bool frequency, double[]? from, bool variation, double v0Slope, TrackSensitivity? sensitivity)
    {
        StepPoint[] steps = prepared.Steps;
        int[][] groups = prepared.Groups;
        int n = steps.Length, np = groups.Length;
        var obs = new double[n];
        var noise = new double[n];
        var dFree = new double[n];
        var position = new int[n];
        for (int j = 0; j < np; j++) foreach (int i in groups[j]) position[i] = j;
        // The linear observable: y = 1 − (f/f0)^2, or u = S − S_free.
        double Observable(double f, double free) => frequency ? 1 - f / free * (f / free) : f - free;
        for (int i = 0; i < n; i++)
        {
            double free = track.At(steps[i].Time), f = steps[i].Signal;
            obs[i] = Observable(f, free);
            if (frequency)
            {
                // dy/df = −2f/f0^2, dy/df0 = 2 f^2/f0^3.
                noise[i] = 2 * f / (free * free) * steps[i].SignalSigma;
                dFree[i] = 2 * f * f / (free * free * free);
            }
            else
            {
                // du/dS_free = −1
                noise[i] = steps[i].SignalSigma;
                dFree[i] = -1;
            }
        }
        double[,] cov = StepCovariance(steps, noise, dFree, track, prepared.Correlated);
        // d obs / d z0 and d obs / d constant through the track (TrackSensitivity), by central differences.
        double[]? obsByGap = null, obsByConstant = null;
        if (sensitivity is not null)
        {
            double[] ObsWith(FreeSignalTrack t) => steps.Select(st => Observable(st.Signal, t.At(st.Time))).ToArray();
            double hz = 1e-11, hk = 1e-4 * Math.Abs(sensitivity.Constant);
            double[] zUp = ObsWith(sensitivity.For(sensitivity.GapOffset + hz, sensitivity.Constant)), zDown = ObsWith(sensitivity.For(sensitivity.GapOffset - hz, sensitivity.Constant));
            double[] kUp = ObsWith(sensitivity.For(sensitivity.GapOffset, sensitivity.Constant + hk)), kDown = ObsWith(sensitivity.For(sensitivity.GapOffset, sensitivity.Constant - hk));
            obsByGap = zUp.Zip(zDown, (u, d) => (u - d) / (2 * hz)).ToArray();
            obsByConstant = kUp.Zip(kDown, (u, d) => (u - d) / (2 * hk)).ToArray();
        }
        (ParabolaFit[] parabolas, double rateStart) = Parabolas(steps, groups, obs, cov);
        // A position's reading: the steps' common one, or the mean of a ramp window's points.
        var piezo = groups.Select(g => g.Average(i => steps[i].Piezo)).ToArray();
        var time = groups.Select(g => g.Average(i => steps[i].Time)).ToArray();
        double tMid = steps.Average(s => s.Time);

        // Free calibration parameters, in this order: z0; the instrument constant unless fixed (frequency: k unless
        // given; deflection: kappa unless k and m are both given); m in deflection mode when neither k nor m is given;
        // v; w. Fixed: k given => m = kappa / k; m given => m fixed.
        bool kGiven = c.SpringConstant is not null, mGiven = c.Sensitivity is not null;
        bool fitConstant = frequency ? !kGiven : !(kGiven && mGiven);
        bool fitM = !frequency && !kGiven && !mGiven;
        int iConstant = fitConstant ? 1 : -1, iM = fitM ? 1 + (fitConstant ? 1 : 0) : -1;
        // Ramp windows also fit the signal's lag time (started from its approach-against-retract estimate).
        bool fitLag = steps.Any(st => st.Speed != 0);
        int iV = 1 + (fitConstant ? 1 : 0) + (fitM ? 1 : 0), iW = iV + 1, iLag = fitLag ? iW + 1 : -1, shared = iW + 1 + (fitLag ? 1 : 0);
        (double Z0, double K, double M, double V, double W) Calibration(ReadOnlySpan<double> p)
        {
            double constant = fitConstant ? p[iConstant] : frequency ? c.SpringConstant!.Value : c.SpringConstant!.Value * c.Sensitivity!.Value;
            double m = frequency ? 0 : fitM ? p[iM] : mGiven ? c.Sensitivity!.Value : constant / c.SpringConstant!.Value;
            return (p[0], constant, m, p[iV], p[iW]);
        }
        double Electric(double a) => frequency ? e.AveragedGradient(a, c.Amplitude) : e.Force(a);

        // Start: the plain parabolas' curvatures give z0 and the constant through the near-contact law.
        var curvature = parabolas.Select(p => p.Curvature).ToArray();
        (double z0s, double qStart) = NearContactStart(piezo, curvature, parabolas.Select(p => p.CurvatureSigma).ToArray(), sign * c.Scale, c.Radius, power: frequency ? 2 : 1);
        var start = new double[shared + 2 * np];
        start[0] = z0s;
        if (fitConstant) start[iConstant] = qStart;
        start[iW] = rateStart;
        if (fitLag) start[iLag] = c.Lag;
        double constantStart = Calibration(start).K;
        double toValue = frequency ? constantStart : -constantStart; // vertex in signal units -> F' or F
        for (int j = 0; j < np; j++)
        {
            start[shared + j] = toValue * parabolas[j].Vertex;
            start[shared + np + j] = parabolas[j].ResidualPotential;
        }
        CurveShape curve = shape ?? CurveShape.Fit(piezo.Select(p => z0s + sign * c.Scale * p).ToArray(),
            parabolas.Select(p => toValue * p.Vertex).ToArray(), parabolas.Select(p => Math.Abs(toValue) * p.VertexSigma).ToArray(), Carrier(c));

        double Gap(in (double Z0, double K, double M, double V, double W) q, double reading, double t) => q.Z0 + sign * c.Scale * reading + q.V * (t - tMid);
        // The Casimir part's change across a position or window: C_j is what the oscillating sphere senses, the
        // amplitude-averaged gradient, while the curve shape (from the previous pass's points) is the plain gradient, so
        // the shape is averaged too (AmplitudeRatio). Without it the log-slope erred by ~(A^2/8) d(F'''/F')/da, 2.5e-4
        // at 120 nm for A = 2 nm: noise-free frequency ramps k −8.2e-7 (−3.4e-10 with A = 0); steps barely move within a position.
        double Shape(double a) => frequency && c.Amplitude > 0 ? curve.Value(a) * AmplitudeRatio(curve, a, c.Amplitude) : curve.Value(a);
        double ModelAt(int i, double[] p)
        {
            var q = Calibration(p);
            StepPoint st = steps[i];
            int j = position[i];
            double aj = Gap(q, piezo[j], time[j]);
            // V0 follows the actual separation within a position along the run's V0 slope (physics.md: use the local
            // value): in deflection mode the sphere moves by up to ~10 nm with the bias, which at 2 mV/um moves V0 by
            // ~20 uV, an odd-order term that would shift the vertex. V0_j belongs to the resting separation at V = V0,
            // a* = a_j − m u* with u* = −C_j / (k m).
            double resting = aj + q.M * p[shared + j] / q.K;
            double shapeAtPosition = Shape(aj);
            double dv0 = st.Bias - p[shared + np + j] - q.W * (st.Time - time[j]);
            double At(double reading, double deflection)
            {
                double a = Gap(q, reading, st.Time) - q.M * deflection;
                double dv = dv0 - v0Slope * (a - resting);
                double force = p[shared + j] * Shape(a) / shapeAtPosition + Electric(a) * dv * dv;
                return frequency ? force / q.K : -force / q.K;
            }
            // The observation's own move with the track's basis, obs(theta) = obs(basis) + G (theta − basis), is carried on
            // the model's side.
            double trackMove = obsByGap is null ? 0 : obsByGap[i] * (q.Z0 - sensitivity!.GapOffset) + obsByConstant![i] * (q.K - sensitivity.Constant);
            if (st.Moments.Second == 0 && st.Speed == 0) return At(st.Piezo, obs[i]) - trackMove;
            // A ramp window (RampWindows): the Gauss rule over its readings, shifted back by the signal's lag.
            WindowRule rule = LaggedWindow.Rule(st.Piezo, st.Moments, st.Speed, fitLag ? p[iLag] : c.Lag, c.LagStep);
            double u0 = At(rule.X0, obs[i]), u1 = rule.W1 != 0 ? At(rule.X1, obs[i]) : 0, u2 = rule.W2 != 0 ? At(rule.X2, obs[i]) : 0;
            if (q.M != 0)
            {
                // Deflection mode: the sphere's deflection follows the force across the window rather than staying at
                // the window's mean. Each node's deflection is obs + (its own signal − the rule's mean), iterated to the
                // fixed point: a step shrinks the error by about F'/k (0.1 at 120 nm for k = 0.05 N/m), and
                // one step (all it took before) left noise-free deflection ramps z0 9.2 pm off.
                for (int step = 0; step < 8; step++)
                {
                    double mean = rule.W0 * u0 + rule.W1 * u1 + rule.W2 * u2;
                    double n0 = At(rule.X0, obs[i] + u0 - mean);
                    double n1 = rule.W1 != 0 ? At(rule.X1, obs[i] + u1 - mean) : 0;
                    double n2 = rule.W2 != 0 ? At(rule.X2, obs[i] + u2 - mean) : 0;
                    double moved = Math.Max(Math.Abs(n0 - u0), Math.Max(Math.Abs(n1 - u1), Math.Abs(n2 - u2)));
                    (u0, u1, u2) = (n0, n1, n2);
                    if (!(moved > 1e-13 * Math.Abs(mean))) break;
                }
            }
            // Frequency mode: the window's recorded mean is of f = f0 sqrt(1 − y), so the observable of that mean is
            // 1 − <sqrt(1 − y)>^2, larger than <y> by about the variance of y over the window / 4 (2e-9 in the nearest
            // 2 nm bins, which noise-free outweighed everything else in the fit).
            double windowed = frequency
                ? 1 - Square(rule.W0 * Math.Sqrt(1 - u0) + (rule.W1 != 0 ? rule.W1 * Math.Sqrt(1 - u1) : 0) + (rule.W2 != 0 ? rule.W2 * Math.Sqrt(1 - u2) : 0))
                : rule.W0 * u0 + rule.W1 * u1 + rule.W2 * u2;
            return windowed - trackMove;
        }
        // Generalised least squares with the full covariance of the observations: noise, the free signal's shared
        // errors and random walk, and the recorded channels' readout errors carried through
        // the model (effective variance: (df/dV)^2 sigma_V^2 per step, (df/dp)(df/dp)^T sigma_p^2 per position),
        // evaluated at the previous solution and refitted once.
        double[] y = obs;
        int m = y.Length;
        double[] Vector(double[] p)
        {
            var f = new double[m];
            for (int i = 0; i < m; i++) f[i] = ModelAt(i, p);
            return f;
        }
        int[][] biasGroups = Enumerable.Range(0, n).Where(i => steps[i].BiasGroup >= 0).GroupBy(i => steps[i].BiasGroup).Select(g => g.ToArray()).ToArray();
        double[,] Covariance(double[] p)
        {
            var total = new double[m, m];
            for (int i = 0; i < n; i++) for (int q = 0; q < n; q++) total[i, q] = cov[i, q];
            var dBias = new double[n];
            var dPiezo = new double[n];
            for (int i = 0; i < n; i++)
            {
                StepPoint st = steps[i];
                double hv = Math.Max(st.BiasSigma, 1e-9), hp = Math.Max(st.PiezoSigma, 1e-15);
                steps[i] = st with { Bias = st.Bias + hv }; double up = ModelAt(i, p);
                steps[i] = st with { Bias = st.Bias - hv }; double down = ModelAt(i, p);
                dBias[i] = (up - down) / (2 * hv);
                steps[i] = st with { Piezo = st.Piezo + hp }; up = ModelAt(i, p);
                steps[i] = st with { Piezo = st.Piezo - hp }; down = ModelAt(i, p);
                dPiezo[i] = (up - down) / (2 * hp);
                steps[i] = st;
                if (st.BiasGroup < 0) total[i, i] += dBias[i] * dBias[i] * st.BiasSigma * st.BiasSigma;
                if (!prepared.PiezoShared) total[i, i] += dPiezo[i] * dPiezo[i] * st.PiezoSigma * st.PiezoSigma;
            }
            // A sweep's windows share its mean recorded bias: one error, (df_i/dV)(df_q/dV) sigma_V^2 between them.
            foreach (int[] g in biasGroups)
                foreach (int i in g) foreach (int q in g) total[i, q] += dBias[i] * dBias[q] * steps[i].BiasSigma * steps[i].BiasSigma;
            if (prepared.PiezoShared)
                foreach (int[] g in groups)
                    foreach (int i in g) foreach (int q in g) total[i, q] += dPiezo[i] * dPiezo[q] * steps[i].PiezoSigma * steps[i].PiezoSigma;
            return total;
        }
        // A systematic variation needs its shift to a small fraction of the parameters' sigmas (relative steps below
        // 1e-7 are far below that); the nominal fit is taken to rounding.
        var options = variation ? new FitOptions(1e-7, 1e-12, 500) : new FitOptions(1e-10, 1e-15, 500);
        if (from is not null) start = (double[])from.Clone();
        // A position's two parameters move only its own points (a sparse Jacobian: 2 + 5 model passes, not 2 np + 5).
        var rowsOf = new int[]?[start.Length];
        for (int j = 0; j < np; j++) rowsOf[shared + j] = rowsOf[shared + np + j] = groups[j];
        FitResult Fit(double[] at, double[,] covariance) => LevenbergMarquardt.FitCorrelated(Vector, y, covariance, at, options, (p, i) => ModelAt(i, p), rowsOf);
        FitResult fit = Fit(start, Covariance(start));
        // From the plain start, refitted with the covariance at the solution. A systematic variation (or a later pass)
        // starts at the solution before it, takes the covariance there and fits once: the covariance moves only at
        // second order in the variation.
        if (from is null) fit = Fit(fit.Parameters, Covariance(fit.Parameters));
        double[] theta = fit.Parameters;
        double[,] thetaCov = fit.Covariance;

        // Each position's result at its mean time: frequency mode a_j and C_j corrected for the amplitude; deflection
        // mode the gap a* where the sphere rests at V = V0 (k x* = −F(a*), iterated) and F(a*) = C_j rho(a*).
        (double[] A, double[] F) Outputs(double[] p, CurveShape smooth)
        {
            var q = Calibration(p);
            var a = new double[np];
            var f = new double[np];
            for (int j = 0; j < np; j++)
            {
                double a0 = Gap(q, piezo[j], time[j]), cj = p[shared + j];
                if (frequency)
                {
                    a[j] = a0;
                    // <F'> = F' + (A^2/8) F''' (physics.md), or the exact average where A >= a/10: divided out.
                    f[j] = cj / AmplitudeRatio(smooth, a0, c.Amplitude);
                    continue;
                }
                double at = a0;
                for (int it = 0; it < 60; it++)
                {
                    double next = a0 + q.M * cj * curve.Value(at) / curve.Value(a0) / q.K; // a = a0 − x, x = −F m / kappa
                    bool done = Math.Abs(next - at) < 1e-17;
                    at = next;
                    if (done) break;
                }
                a[j] = at;
                f[j] = cj * curve.Value(at) / curve.Value(a0);
            }
            return (a, f);
        }
        var rawSigma = Enumerable.Range(0, np).Select(j => Math.Sqrt(thetaCov[shared + j, shared + j])).ToArray();
        (double[] separation, double[] value) = Outputs(theta, curve);
        CurveShape newShape = CurveShape.Fit(separation, value, rawSigma, Carrier(c));
        (separation, value) = Outputs(theta, newShape);
        var slope = Enumerable.Range(0, np).Select(j => value[j] * newShape.LogSlope(separation[j])).ToArray();
        var correction = frequency ? separation.Select(a => AmplitudeRatio(newShape, a, c.Amplitude) - 1).ToArray() : new double[np];

        // Outputs [F_eff_j, z0, K, m, s, v, w] as functions of theta, differentiated numerically; F_eff is the value
        // at a fixed separation (F − slope da).
        var cal = Calibration(theta);
        int rows = np + CalibrationRows;
        var l = new double[rows, theta.Length];
        for (int q = 0; q < theta.Length; q++)
        {
            // A hundredth of the parameter's uncertainty: small enough to stay linear, large enough against rounding.
            double sq = Math.Sqrt(thetaCov[q, q]);
            double h = sq > 0 ? 0.01 * sq : 1e-7 * Math.Max(Math.Abs(theta[q]), 1e-30);
            double[] up = (double[])theta.Clone(), down = (double[])theta.Clone();
            up[q] += h; down[q] -= h;
            (double[] au, double[] fu) = Outputs(up, newShape);
            (double[] ad, double[] fd) = Outputs(down, newShape);
            var cu = Calibration(up); var cd = Calibration(down);
            for (int j = 0; j < np; j++) l[j, q] = ((fu[j] - fd[j]) - slope[j] * (au[j] - ad[j])) / (2 * h);
            l[np, q] = (cu.Z0 - cd.Z0) / (2 * h);
            l[np + 1, q] = (cu.K - cd.K) / (2 * h);
            l[np + 2, q] = (cu.M - cd.M) / (2 * h);
            l[np + 3, q] = (cu.V - cd.V) / (2 * h);
            l[np + 4, q] = (cu.W - cd.W) / (2 * h);
        }
        double[,] joint = Matrices.Propagate(l, thetaCov);
        var sharedIdx = new List<int> { np };
        if (fitConstant) sharedIdx.Add(np + 1);
        if (fitM) sharedIdx.Add(np + 2);
        sharedIdx.Add(np + 3);
        sharedIdx.Add(np + 4);
        double k = frequency ? cal.K : cal.K / cal.M;
        (double K, double M) ToPhysical(double dK, double dM) => frequency ? (dK, 0) : (dK / cal.M - cal.K / (cal.M * cal.M) * dM, dM);
        (double[,] random, SystematicSource calSource) = Split(joint, np, sharedIdx, ToPhysical);
        double varK;
        if (frequency) varK = joint[np + 1, np + 1];
        else
        {
            // k = kappa / m with its statistical variance from (kappa, m).
            double vk = joint[np + 1, np + 1], vm = joint[np + 2, np + 2], ckm = joint[np + 1, np + 2];
            varK = Math.Max(0, k * k * (vk / (cal.K * cal.K) + vm / (cal.M * cal.M) - 2 * ckm / (cal.K * cal.M)));
        }
        var v0Idx = Enumerable.Range(shared + np, np).ToArray();
        double[,] v0Cov = Matrices.Sub(thetaCov, v0Idx, v0Idx);
        double scaleBack = frequency ? cal.K : -cal.K; // plain parabola in signal units -> physical units
        var positions = Enumerable.Range(0, np).Select(j => new PositionFit(j, piezo[j], time[j], separation[j],
            theta[shared + np + j], Math.Sqrt(v0Cov[j, j]), scaleBack * parabolas[j].Curvature, Math.Abs(scaleBack) * parabolas[j].CurvatureSigma,
            value[j], Math.Sqrt(random[j, j]), parabolas[j].ChiSquare, parabolas[j].DegreesOfFreedom, groups[j].Length)).ToArray();
        var fitted = new List<string> { "z0" };
        if (frequency ? !kGiven : fitConstant) fitted.Add(frequency ? "k" : "k m");
        if (fitM) fitted.Add("m");
        fitted.Add("gap drift");
        fitted.Add("V0 drift");
        if (fitLag) fitted.Add("signal lag");
        Estimate Stat(double v, double variance) => new(v, Math.Sqrt(Math.Max(variance, 0)), Math.Sqrt(Math.Max(variance, 0)));
        var calibration = new RunCalibration(Stat(cal.Z0, joint[np, np]), Stat(k, varK), frequency ? null : Stat(cal.M, joint[np + 2, np + 2]),
            fit.ChiSquare, fit.DegreesOfFreedom, fit.Stop, fitted)
        {
            GapDrift = Stat(cal.V, joint[np + 3, np + 3]),
            ResidualPotentialDrift = Stat(cal.W, joint[np + 4, np + 4]),
            SignalLag = fitLag ? Stat(theta[iLag], thetaCov[iLag, iLag]) : null,
            ReferenceTime = tMid,
        };
        return new State(calibration, positions, separation, value, slope, time, random, calSource, v0Cov, correction, newShape, cal.Z0, cal.K, cal.M, theta);
    }

    /// <summary>
    /// &lt;F'&gt;/F' of the smooth curve at mean gap a for amplitude A: 1 + (A^2/8) F'''/F' when the amplitude is small
    /// against the gap, else (A >= a/10) the exact oscillation average &lt;F'&gt; = (2/pi) Integral F'(a + A u) sqrt(1 − u^2) du
    /// (F. J. Giessibl, Phys. Rev. B 56, 16010 (1997); the relation the Sader–Jarvis inversion inverts, J. E. Sader and
    /// S. P. Jarvis, Appl. Phys. Lett. 84, 1801 (2004)). The force curve is the smooth fit of the run's own points, and
    /// the division by this ratio is iterated with it, which inverts the average for that curve.
    /// </summary>
    private static double AmplitudeRatio(CurveShape smooth, double a, double amplitude) => amplitude >= a / 10
        ? ForceFit.Theory.Geometry.AmplitudeAverage.Gradient(smooth.Value, a, amplitude) / smooth.Value(a)
        : 1 + amplitude * amplitude / 8 * smooth.SecondOverValue(a);

    // Start of the calibration from the near-contact laws (physics.md): the curvature is c = pi eps0 R / (q a^power)
    // with power 2 for the gradient (q = k) and 1 for the force (q = k m), so c^(-1/power) is linear in the reading;
    // the line weighted by each curvature's uncertainty carried through, sigma_w = sigma_c c^(-1/power − 1) / power.
    private static (double Z0, double Q) NearContactStart(double[] piezo, double[] curvature, double[] curvatureSigma, double direction, double radius, int power)
    {
        const double eps0 = 8.8541878128e-12; // CODATA 2018, for the starting value only
        var idx = Enumerable.Range(0, piezo.Length).Where(j => curvature[j] > 0 && curvatureSigma[j] > 0 && curvatureSigma[j] < curvature[j]).ToArray();
        double[] x = idx.Select(j => piezo[j]).ToArray(), w = idx.Select(j => Math.Pow(curvature[j], -1.0 / power)).ToArray();
        double[] sw = idx.Select(j => curvatureSigma[j] * Math.Pow(curvature[j], -1.0 / power - 1) / power).ToArray();
        if (x.Length < 2) return (100e-9, 1);
        FitResult line = LinearLeastSquares.Polynomial(x, w, 1, sw);
        double b0 = line.Parameters[0], b1 = line.Parameters[1];
        // w = (q / (pi eps0 R))^(1/power) (z0 + d s p): b1 = (q/(pi eps0 R))^(1/power) d s.
        double q = Math.PI * eps0 * radius * Math.Pow(b1 / direction, power);
        return (b0 / b1 * direction, q);
    }

    // Conditions the joint covariance of [points, z0, constant, m, s, v, w] on the free calibration parameters: the
    // points' covariance with the calibration held fixed (random), and the calibration's own uncertainty as
    // independent one-sigma directions (with C_cal = L L^T, direction q moves every output by D L_q, D the
    // regression of all outputs on the free calibration parameters).
    private static (double[,] Random, SystematicSource Calibration) Split(double[,] joint, int np, List<int> sharedIdx, Func<double, double, (double K, double M)> toPhysical)
    {
        int rows = joint.GetLength(0);
        (double[,] conditional, double[,] d) = Matrices.Condition(joint, Enumerable.Range(0, rows).ToArray(), sharedIdx);
        var points = Enumerable.Range(0, np).ToArray();
        double[,] random = Matrices.Sub(conditional, points, points);
        double[,] calCov = Matrices.Sub(joint, sharedIdx, sharedIdx);
        double[,] chol = Matrices.CholeskyLower(calCov);
        int q = sharedIdx.Count;
        var contributions = new double[q][];
        var z0 = new double[q];
        var k = new double[q];
        var m = new double[q];
        for (int col = 0; col < q; col++)
        {
            var moved = new double[rows];
            for (int o = 0; o < rows; o++) for (int r = 0; r < q; r++) moved[o] += d[o, r] * chol[r, col];
            contributions[col] = moved[..np];
            z0[col] = moved[np];
            (k[col], m[col]) = toPhysical(moved[np + 1], moved[np + 2]);
        }
        return (random, new SystematicSource("calibration", contributions, z0, k, m, false));
    }

    // ---------------------------------------------------------------- shared pieces

    // Covariance of the steps' observables: own noise (correlated between neighbouring ramp windows) plus the free
    // signal's shared errors and random walk.
    private static double[,] StepCovariance(StepPoint[] steps, double[] noise, double[] dFree, FreeSignalTrack track, (int I, int L, double Rho)[] correlated)
    {
        int n = steps.Length;
        var c = new double[n, n];
        for (int i = 0; i < n; i++)
        {
            c[i, i] = noise[i] * noise[i];
            for (int l = 0; l <= i; l++)
            {
                double v = dFree[i] * dFree[l] * track.Covariance(steps[i].Time, steps[l].Time);
                c[i, l] += v;
                if (l != i) c[l, i] += v;
            }
        }
        foreach ((int i, int l, double rho) in correlated)
        {
            double v = noise[i] * noise[l] * rho;
            c[i, l] += v;
            c[l, i] += v;
        }
        return c;
    }

    // A plain parabola per position with diagonal weights (the calibration fit's start and tables/parabolas.csv). V0 drifts in time (physics.md:
    // a V0 that varies with time is measured and propagated): a first pass fits y = b0 + b1 u + b2 u^2 + b3 u (t − t_j)
    // at each position (u = V − mean V), which gives the local rate dV0/dt = −b3/(2 b2); their weighted mean over the
    // run refers every bias to the position's mean time, V_eff = V − (dV0/dt)(t − t_j), before the final parabola.
    private static (ParabolaFit[] Fits, double Rate) Parabolas(StepPoint[] steps, int[][] groups, double[] y, double[,] cy)
    {
        double sumW = 0, sumWR = 0;
        foreach (int[] g in groups)
        {
            if (g.Length < 5) continue;
            double vm = g.Average(i => steps[i].Bias), tm = g.Average(i => steps[i].Time);
            var design = new double[g.Length, 4];
            for (int k = 0; k < g.Length; k++)
            {
                double u = steps[g[k]].Bias - vm, dt = steps[g[k]].Time - tm;
                design[k, 0] = 1; design[k, 1] = u; design[k, 2] = u * u; design[k, 3] = u * dt;
            }
            FitResult f = LinearLeastSquares.Fit(design, g.Select(i => y[i]).ToArray(), g.Select(i => Math.Sqrt(cy[i, i])).ToArray());
            double b2 = f.Parameters[2], rate = -f.Parameters[3] / (2 * b2);
            double sigma = Math.Sqrt(f.Covariance[3, 3]) / (2 * Math.Abs(b2));
            if (!(sigma > 0) || !double.IsFinite(rate)) continue;
            sumW += 1 / (sigma * sigma);
            sumWR += rate / (sigma * sigma);
        }
        double v0Rate = sumW > 0 ? sumWR / sumW : 0;
        var fits = new ParabolaFit[groups.Length];
        for (int j = 0; j < groups.Length; j++)
        {
            int[] g = groups[j];
            double tm = g.Average(i => steps[i].Time);
            double[] bias = g.Select(i => steps[i].Bias - v0Rate * (steps[i].Time - tm)).ToArray(), yy = g.Select(i => y[i]).ToArray();
            double[] sigma = g.Select(i => Math.Sqrt(cy[i, i])).ToArray();
            fits[j] = ParabolaFit.Fit(bias, yy, sigma);
        }
        return (fits, v0Rate);
    }

}
