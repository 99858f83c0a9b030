using ForceFit.Fitting;

namespace ForceFit.Analysis.Reduction;

/// <summary>A value with its standard uncertainty (SI) and the statistical part of it.</summary>
/// <param name="Value">Best estimate.</param>
/// <param name="Sigma">Total standard uncertainty (statistical and systematic in quadrature).</param>
/// <param name="StatisticalSigma">The part from the noise of this night's data alone.</param>
public sealed record Estimate(double Value, double Sigma, double StatisticalSigma);

/// <summary>The bias parabola at one piezo position, in the mode's physical units.</summary>
/// <param name="Index">Position number in the run (by piezo reading).</param>
/// <param name="Piezo">Mean piezo reading (m).</param>
/// <param name="Time">Mean time of its steps (s).</param>
/// <param name="Separation">Gap a = z0 + d s p (− x in deflection mode, at V = V0) (m).</param>
/// <param name="ResidualPotential">V0, the vertex position (V).</param>
/// <param name="ResidualPotentialSigma">Its statistical uncertainty (V).</param>
/// <param name="Curvature">Electrostatic curvature: F' per V^2 (frequency mode, N/(m V^2)) or F per V^2 (deflection, N/V^2).</param>
/// <param name="CurvatureSigma">Its statistical uncertainty.</param>
/// <param name="Vertex">The bias-free value: force gradient (N/m) or force (N), before corrections.</param>
/// <param name="VertexSigma">Its statistical uncertainty.</param>
/// <param name="ChiSquare">Chi-square of the parabola.</param>
/// <param name="DegreesOfFreedom">Steps minus 3.</param>
/// <param name="Steps">Steps used.</param>
public sealed record PositionFit(int Index, double Piezo, double Time, double Separation, double ResidualPotential, double ResidualPotentialSigma,
    double Curvature, double CurvatureSigma, double Vertex, double VertexSigma, double ChiSquare, int DegreesOfFreedom, int Steps);

/// <summary>One systematic error source: how every point (and the calibration) moves for one standard deviation of it.</summary>
/// <param name="Name">Source name as in the budget: "calibration", "piezo scale", "radius", "amplitude", ...</param>
/// <param name="Contributions">Signed one-sigma change of each point's value at fixed separation (gap errors turned into value errors through the local slope); several rows when the source has several independent directions.</param>
/// <param name="GapOffset">Signed change of z0 for each row (m).</param>
/// <param name="SpringConstant">Signed change of k for each row (N/m).</param>
/// <param name="Sensitivity">Signed change of m for each row (m per signal unit), deflection mode.</param>
/// <param name="SharedAcrossRuns">True when the same physical quantity affects every run of the night alike (s, R, A).</param>
public sealed record SystematicSource(string Name, double[][] Contributions, double[] GapOffset, double[] SpringConstant, double[] Sensitivity, bool SharedAcrossRuns)
{
    /// <summary>
    /// How far the input was moved either way to find the rows: its stated standard uncertainty in its SI unit (for the
    /// reference-gap Casimir force, the relative change of that force); NaN for the calibration's own source.
    /// </summary>
    public double Step { get; init; } = double.NaN;

    /// <summary>Signed change of the run's reported slope of V0 against separation (V/m); 0 for the calibration's own source.</summary>
    public double ResidualPotentialSlope { get; init; }

    /// <summary>The source's standard uncertainty at each point: the rows added in quadrature.</summary>
    public double[] PointSigma() => Enumerable.Range(0, Contributions[0].Length)
        .Select(i => Math.Sqrt(Contributions.Sum(r => r[i] * r[i]))).ToArray();
}

/// <summary>One line of a run's calibration budget (<see cref="RunResult.CalibrationBudget"/>).</summary>
/// <param name="Source">"statistical", a systematic source's name, or "total".</param>
/// <param name="Step">How far the source's input was moved (<see cref="SystematicSource.Step"/>); NaN for statistical and total.</param>
/// <param name="GapOffset">Change of z0 (m); for statistical and total the standard uncertainty.</param>
/// <param name="SpringConstant">Change of k (N/m), likewise.</param>
/// <param name="Sensitivity">Change of m (m per signal unit), NaN in frequency mode.</param>
public sealed record CalibrationShift(string Source, double Step, double GapOffset, double SpringConstant, double Sensitivity);

/// <summary>The calibration of one run.</summary>
/// <param name="GapOffset">z0 (m).</param>
/// <param name="SpringConstant">k (N/m).</param>
/// <param name="Sensitivity">m (m per signal unit), deflection mode; null in frequency mode.</param>
/// <param name="ChiSquare">Chi-square of the calibration fit.</param>
/// <param name="DegreesOfFreedom">Its degrees of freedom.</param>
/// <param name="Stop">Why the fit stopped.</param>
/// <param name="Fitted">Which of z0, k, m were fitted (the others were given).</param>
public sealed record RunCalibration(Estimate GapOffset, Estimate SpringConstant, Estimate? Sensitivity, double ChiSquare, int DegreesOfFreedom,
    StopReason Stop, IReadOnlyList<string> Fitted)
{
    /// <summary>The piezo scale s used: fitted with the stated value as a prior, or the stated value.</summary>
    public Estimate? PiezoScale { get; init; }

    /// <summary>Fitted gap drift dz0/dt (m/s); z0 is the gap offset at <see cref="ReferenceTime"/>.</summary>
    public Estimate? GapDrift { get; init; }

    /// <summary>Fitted drift of V0 with time within the run (V/s).</summary>
    public Estimate? ResidualPotentialDrift { get; init; }

    /// <summary>The recorded signal's first-order lag time (s) measured from approach against retract (distance-ramps only).</summary>
    public Estimate? SignalLag { get; init; }

    /// <summary>The time (s, in the data file's clock) at which z0 is quoted: the mean time of the run's steps.</summary>
    public double ReferenceTime { get; init; }

    /// <summary>False when the fit stopped at its iteration limit, without progress or singular (not trusted).</summary>
    public bool Converged => Stop is not (StopReason.IterationLimit or StopReason.NoProgress or StopReason.Singular);

    /// <summary>Probability of a chi-square at least this large if the model and uncertainties are right.</summary>
    public double PValue => DegreesOfFreedom > 0 ? Statistics.ChiSquareSurvival(ChiSquare, DegreesOfFreedom) : double.NaN;
}

/// <summary>The reduced result of one run: a value (force gradient or force) per position with its errors.</summary>
/// <param name="Run">Run name.</param>
/// <param name="Calibration">z0, k, m.</param>
/// <param name="Positions">The bias parabolas.</param>
/// <param name="Separation">a per point (m), ascending.</param>
/// <param name="Value">Force gradient (N/m) or force (N) per point, corrected for the oscillation amplitude.</param>
/// <param name="PointTime">Mean time of each point's steps (s).</param>
/// <param name="RandomCovariance">Covariance of the values from this run's noise with the calibration held fixed.</param>
/// <param name="Systematics">Systematic sources: the calibration's own uncertainty first, then s, R, A and given constants.</param>
/// <param name="FreeSignal">f0(t) or S_free(t).</param>
/// <param name="ResidualPotentialCovariance">Covariance of the positions' V0 values.</param>
/// <param name="AmplitudeCorrection">Relative correction (A^2/8) F'''/F' removed from each point (0 in deflection mode).</param>
/// <param name="Warnings">What the report must say about this run.</param>
public sealed record RunResult(string Run, RunCalibration Calibration, IReadOnlyList<PositionFit> Positions, double[] Separation, double[] Value,
    double[] PointTime, double[,] RandomCovariance, IReadOnlyList<SystematicSource> Systematics, FreeSignalTrack FreeSignal,
    double[,] ResidualPotentialCovariance, double[] AmplitudeCorrection, IReadOnlyList<string> Warnings)
{
    /// <summary>
    /// Mean gap of the free-signal references (m), undeflected (z0 + d s p), where their Casimir force is taken from the
    /// settings' theories; NaN when there are no references (a given f0 or S_free).
    /// </summary>
    public double ReferenceGap { get; init; } = double.NaN;

    /// <summary>
    /// What moves the calibration: the fit's own (statistical) uncertainty, each systematic source's signed change of
    /// z0, k and m for +1 sigma of its input (rows in quadrature where a source has several), and the total.
    /// </summary>
    public IReadOnlyList<CalibrationShift> CalibrationBudget()
    {
        RunCalibration c = Calibration;
        double Signed(double[] rows) => rows.Length == 1 ? rows[0] : Math.Sqrt(rows.Sum(v => v * v));
        var list = new List<CalibrationShift>
        {
            new("statistical", double.NaN, c.GapOffset.StatisticalSigma, c.SpringConstant.StatisticalSigma, c.Sensitivity?.StatisticalSigma ?? double.NaN),
        };
        foreach (SystematicSource s in Systematics.Where(s => s.Name != "calibration"))
            list.Add(new(s.Name, s.Step, Signed(s.GapOffset), Signed(s.SpringConstant), c.Sensitivity is null ? double.NaN : Signed(s.Sensitivity)));
        list.Add(new("total", double.NaN, c.GapOffset.Sigma, c.SpringConstant.Sigma, c.Sensitivity?.Sigma ?? double.NaN));
        return list;
    }

    /// <summary>Random standard uncertainty of each point.</summary>
    public double[] RandomSigma => Enumerable.Range(0, Value.Length).Select(i => Math.Sqrt(RandomCovariance[i, i])).ToArray();

    /// <summary>Total systematic standard uncertainty of each point (all sources in quadrature).</summary>
    public double[] SystematicSigma => Enumerable.Range(0, Value.Length)
        .Select(i => Math.Sqrt(Systematics.Sum(s => s.Contributions.Sum(r => r[i] * r[i])))).ToArray();
}
