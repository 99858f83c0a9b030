namespace ForceFit.Fitting;

/// <summary>Why an iterative fit stopped.</summary>
public enum StopReason
{
    /// <summary>A closed-form (linear) solution.</summary>
    Exact,
    /// <summary>The relative change of the parameters fell below the tolerance.</summary>
    ParametersConverged,
    /// <summary>The relative decrease of chi-square fell below the tolerance.</summary>
    ChiSquareConverged,
    /// <summary>The gradient vanished to machine precision.</summary>
    GradientVanished,
    /// <summary>The iteration limit was reached: the result is not trusted.</summary>
    IterationLimit,
    /// <summary>The damping grew without bound (no downhill step found): the result is not trusted.</summary>
    NoProgress,
    /// <summary>J^T W J is numerically singular at the end (a parameter the data do not determine): not trusted.</summary>
    Singular,
}

/// <summary>
/// A complete least-squares result: values, covariance, chi-square, degrees of freedom and why it stopped.
/// With stated sigmas the covariance is (J^T W J)^-1 and chi-square is Sum (r/sigma)^2; without them (all weights 1)
/// the covariance is scaled by s^2 = RSS/dof, as in the NIST StRD certified standard deviations.
/// </summary>
/// <param name="Parameters">Best-fit parameters.</param>
/// <param name="Covariance">Their covariance matrix.</param>
/// <param name="ChiSquare">Weighted sum of squared residuals (the residual sum of squares when unweighted).</param>
/// <param name="DegreesOfFreedom">Observations minus parameters.</param>
/// <param name="Iterations">Iterations used (0 for a closed-form fit).</param>
/// <param name="Stop">Why the fit stopped.</param>
public sealed record FitResult(double[] Parameters, double[,] Covariance, double ChiSquare, int DegreesOfFreedom, int Iterations, StopReason Stop)
{
    /// <summary>Standard uncertainties: square roots of the covariance diagonal.</summary>
    public double[] StandardErrors => Enumerable.Range(0, Parameters.Length).Select(i => Math.Sqrt(Covariance[i, i])).ToArray();

    /// <summary>True unless the fit stopped at the iteration limit or without progress.</summary>
    public bool Converged => Stop is not (StopReason.IterationLimit or StopReason.NoProgress or StopReason.Singular);

    /// <summary>Chi-square per degree of freedom.</summary>
    public double ReducedChiSquare => DegreesOfFreedom > 0 ? ChiSquare / DegreesOfFreedom : double.NaN;

    /// <summary>Probability of a chi-square at least this large if the model and sigmas are right.</summary>
    public double PValue => DegreesOfFreedom > 0 ? Statistics.ChiSquareSurvival(ChiSquare, DegreesOfFreedom) : double.NaN;

    /// <summary>Correlation coefficient of parameters i and j.</summary>
    public double Correlation(int i, int j) => Covariance[i, j] / Math.Sqrt(Covariance[i, i] * Covariance[j, j]);
}

/// <summary>Statistical distributions used by the fits (MathNet.Numerics).</summary>
public static class Statistics
{
    /// <summary>P(chi^2_dof >= x).</summary>
    public static double ChiSquareSurvival(double x, int dof) => x <= 0 ? 1 : MathNet.Numerics.SpecialFunctions.GammaUpperRegularized(dof / 2.0, x / 2);

    /// <summary>Two-sided Student's t quantile for a confidence level (e.g. 0.95) and degrees of freedom.</summary>
    public static double StudentT(double confidence, int dof) => MathNet.Numerics.Distributions.StudentT.InvCDF(0, 1, dof, 0.5 + confidence / 2);
}
