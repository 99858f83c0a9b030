using System.Globalization;
using ForceFit.Analysis.Comparison;
using ForceFit.Core.Problems;
using ForceFit.Fitting;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;

namespace ForceFit.Analysis.Reduction;

/// <summary>A reduced night: every run's steps and result, the combined night and its comparison with theory.</summary>
/// <param name="Night">The settings.</param>
/// <param name="Segments">Each run's steps.</param>
/// <param name="Runs">Each run's reduction.</param>
/// <param name="Combined">The runs on a common separation grid, combined.</param>
/// <param name="Comparison">Each [[theory]] against the combined night.</param>
/// <param name="Options">The comparison's Monte Carlo settings.</param>
public sealed record NightReduction(NightSettings Night, IReadOnlyList<RunSegments> Segments, IReadOnlyList<RunResult> Runs,
    CombinedNight Combined, IReadOnlyList<TheoryResult> Comparison, ComparisonOptions Options)
{
    /// <summary>Frequency-shift or deflection (one mode per night).</summary>
    public bool Frequency => Night.Runs[0].Instrument.Mode == InstrumentMode.FrequencyShift;

    /// <summary>Reasons the result cannot be trusted (exit status 3), empty when it can.</summary>
    public IReadOnlyList<string> TrustProblems => Runs
        .Where(r => !r.Calibration.Converged)
        .Select(r => $"{r.Run}: the calibration fit did not converge ({r.Calibration.Stop})")
        .Concat(Runs.Where(r => r.Calibration.DegreesOfFreedom > 0 && r.Calibration.PValue < 1e-6)
            .Select(r => $"{r.Run}: the calibration fit is inconsistent with the uncertainties (chi2 = {r.Calibration.ChiSquare.ToString("F1", CultureInfo.InvariantCulture)} for {r.Calibration.DegreesOfFreedom}, p = {r.Calibration.PValue.ToString("G2", CultureInfo.InvariantCulture)})"))
        .ToArray();

    /// <summary>Runs that disagree with the rest of the night (kept in the combination, flagged with the reason).</summary>
    public IReadOnlyList<string> Flags => Combined.Consistency.Where(c => c.Flagged).Select(c => c.Reason!).ToArray();
}

/// <summary>How far a long stage has come, for a progress display.</summary>
/// <param name="Stage">"ingest" (bytes), "calibration" (runs), "Monte Carlo" (draws).</param>
/// <param name="Done">Units done.</param>
/// <param name="Total">Units in all.</param>
/// <param name="Item">What is being worked on (a run name).</param>
public sealed record StageProgress(string Stage, long Done, long Total, string Item);

/// <summary>The whole reduction of a night, from run files to the comparison with theory (no files written).</summary>
public static class NightPipeline
{
    /// <summary>Reads, reduces and returns a night (no files written); progress by stage, cancellation between blocks and draws.</summary>
    public static NightReduction Reduce(NightSettings night, ComparisonOptions? options = null, CancellationToken cancel = default, IProgress<StageProgress>? progress = null)
    {
        options ??= new ComparisonOptions();
        if (night.Runs.Select(r => r.Instrument.Mode).Distinct().Count() > 1)
            throw new InputException(new Problem(night.Folder, null, "the night mixes frequency-shift and deflection runs; reduce them separately"));
        long totalBytes = night.Runs.Sum(r => new FileInfo(r.DataFile).Length), doneBytes = 0;
        var segments = new RunSegments[night.Runs.Count];
        var results = new RunResult[segments.Length];
        // Each run's calibration starts as soon as its steps are read, while the next run is read: reading is only
        // partly parallel, the calibrations fill the rest of the cores. Calibration progress is shown once reading ends.
        var calibrations = new List<Task>();
        var gate = new Lock();
        int reduced = 0;
        bool reading = true;
        void Calibrated(int i)
        {
            lock (gate)
            {
                reduced++;
                if (!reading) progress?.Report(new StageProgress("calibration", reduced, segments.Length, segments[i].Run.Name));
            }
        }
        try
        {
            for (int i = 0; i < segments.Length; i++)
            {
                long before = doneBytes;
                segments[i] = RunSteps.Read(night.Runs[i], new Relay<long>(b => progress?.Report(new StageProgress("ingest", before + b, totalBytes, night.Runs[i].Name))), cancel);
                doneBytes += new FileInfo(night.Runs[i].DataFile).Length;
                int run = i;
                calibrations.Add(Task.Run(() =>
                {
                    results[run] = RunReducer.Reduce(segments[run]);
                    Calibrated(run);
                }, CancellationToken.None));
            }
        }
        catch
        {
            // A run that cannot be read stops the night; the calibrations already started are waited for, not left running.
            try { Task.WaitAll(calibrations); } catch (AggregateException) { }
            throw;
        }
        lock (gate)
        {
            reading = false;
            if (reduced > 0) progress?.Report(new StageProgress("calibration", reduced, segments.Length, "runs"));
        }
        try
        {
            Task.WaitAll(calibrations);
        }
        catch (AggregateException e) when (e.InnerExceptions.All(x => x is InputException))
        {
            // Every run's problems at once, in run order, as one input error.
            throw new InputException(e.InnerExceptions.Cast<InputException>().SelectMany(x => x.Problems).ToArray());
        }
        cancel.ThrowIfCancellationRequested();
        bool frequency = night.Runs[0].Instrument.Mode == InstrumentMode.FrequencyShift;
        CombinedNight combined = NightCombiner.Combine(results, frequency);
        var draws = new Relay<int>(d => progress?.Report(new StageProgress("Monte Carlo", d, options.Draws, "draws")));
        IReadOnlyList<TheoryResult> comparison = TheoryComparison.Compare(combined, night.Runs[0].Theory, options, cancel, draws);
        return new NightReduction(night, segments, results, combined, comparison, options);
    }

    // Forwards progress reports synchronously (Progress<T> would post them to the thread pool, out of order).
    private sealed class Relay<T>(Action<T> report) : IProgress<T>
    {
        public void Report(T value) => report(value);
    }

    /// <summary>
    /// V0 at the run's nearest position (at that position's time), and the slope of V0 against separation with its
    /// statistical and systematic uncertainty (<see cref="RunReducer.ResidualPotentialTrend"/>; every systematic source's
    /// change of the slope, <see cref="SystematicSource.ResidualPotentialSlope"/>, added in quadrature).
    /// </summary>
    public static (double V0, double V0Sigma, double Slope, double SlopeSigma, double Separation) ResidualPotential(RunResult run)
    {
        (FitResult line, double nearest) = RunReducer.ResidualPotentialTrend(run.Positions, run.ResidualPotentialCovariance, run.Calibration.ResidualPotentialDrift);
        double systematic = run.Systematics.Sum(src => src.ResidualPotentialSlope * src.ResidualPotentialSlope);
        return (line.Parameters[0], Math.Sqrt(line.Covariance[0, 0]), line.Parameters[1], Math.Sqrt(line.Covariance[1, 1] + systematic), nearest);
    }
}
