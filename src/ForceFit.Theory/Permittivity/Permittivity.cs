namespace ForceFit.Theory.Permittivity;

/// <summary>
/// A dielectric function along the imaginary frequency axis, eps(i xi), with its zero-frequency behaviour
/// given as limits (physics.md: the l = 0 Matsubara term is taken as a limit, never by evaluating at a tiny xi).
/// </summary>
public interface IPermittivity
{
    /// <summary>eps(i xi) for xi &gt; 0 in rad/s.</summary>
    double At(double xi);

    /// <summary>True when eps(i xi) diverges as xi → 0 (a conductor): then r_TM(0) = 1.</summary>
    bool IsConductor { get; }

    /// <summary>eps(0) for an insulator (finite); ignored for conductors.</summary>
    double Static { get; }

    /// <summary>
    /// lim_{xi→0} xi^2 (eps(i xi) − 1) in (rad/s)^2: omega_p^2 for plasma-like models, 0 for Drude and insulators.
    /// It sets r_TE(0) (physics.md, Lifshitz theory).
    /// </summary>
    double ZeroFrequencyPlasmaSquared { get; }

    /// <summary>A short description for reports.</summary>
    string Describe();
}

/// <summary>One oscillator g / (w^2 + xi^2 + gamma xi), SI (rad/s).</summary>
/// <param name="Strength">g in (rad/s)^2.</param>
/// <param name="Frequency">w in rad/s.</param>
/// <param name="Damping">gamma in rad/s.</param>
public readonly record struct Oscillator(double Strength, double Frequency, double Damping)
{
    /// <summary>The term at imaginary frequency xi.</summary>
    public double At(double xi) => Strength / (Frequency * Frequency + xi * xi + Damping * xi);
}

/// <summary>Drude metal: eps = 1 + wp^2 / (xi (xi + gamma)) (physics.md).</summary>
/// <param name="PlasmaFrequency">wp in rad/s.</param>
/// <param name="Damping">gamma in rad/s.</param>
public sealed record DrudeModel(double PlasmaFrequency, double Damping) : IPermittivity
{
    /// <inheritdoc />
    public double At(double xi) => 1.0 + PlasmaFrequency * PlasmaFrequency / (xi * (xi + Damping));
    /// <inheritdoc />
    public bool IsConductor => true;
    /// <inheritdoc />
    public double Static => double.PositiveInfinity;
    /// <inheritdoc />
    public double ZeroFrequencyPlasmaSquared => Damping > 0 ? 0.0 : PlasmaFrequency * PlasmaFrequency;
    /// <inheritdoc />
    public string Describe() => $"Drude, wp = {PlasmaFrequency:G6} rad/s, gamma = {Damping:G6} rad/s";
}

/// <summary>Plasma model: eps = 1 + wp^2 / xi^2 (physics.md).</summary>
/// <param name="PlasmaFrequency">wp in rad/s.</param>
public sealed record PlasmaModel(double PlasmaFrequency) : IPermittivity
{
    /// <inheritdoc />
    public double At(double xi) => 1.0 + PlasmaFrequency * PlasmaFrequency / (xi * xi);
    /// <inheritdoc />
    public bool IsConductor => true;
    /// <inheritdoc />
    public double Static => double.PositiveInfinity;
    /// <inheritdoc />
    public double ZeroFrequencyPlasmaSquared => PlasmaFrequency * PlasmaFrequency;
    /// <inheritdoc />
    public string Describe() => $"plasma, wp = {PlasmaFrequency:G6} rad/s";
}

/// <summary>Generalized plasma model: eps = 1 + wp^2/xi^2 + Sum g_j / (w_j^2 + xi^2 + gamma_j xi) (physics.md).</summary>
/// <param name="PlasmaFrequency">wp in rad/s.</param>
/// <param name="Oscillators">Core-electron oscillators.</param>
public sealed record GeneralizedPlasmaModel(double PlasmaFrequency, IReadOnlyList<Oscillator> Oscillators) : IPermittivity
{
    /// <inheritdoc />
    public double At(double xi)
    {
        double eps = 1.0 + PlasmaFrequency * PlasmaFrequency / (xi * xi);
        foreach (Oscillator o in Oscillators) eps += o.At(xi);
        return eps;
    }
    /// <inheritdoc />
    public bool IsConductor => true;
    /// <inheritdoc />
    public double Static => double.PositiveInfinity;
    /// <inheritdoc />
    public double ZeroFrequencyPlasmaSquared => PlasmaFrequency * PlasmaFrequency;
    /// <inheritdoc />
    public string Describe() => $"generalized plasma, wp = {PlasmaFrequency:G6} rad/s, {Oscillators.Count} oscillators";
}

/// <summary>Lorentz oscillators for an insulator: eps = eps_inf + Sum g_j / (w_j^2 + xi^2 + gamma_j xi).</summary>
/// <param name="EpsInf">The constant background.</param>
/// <param name="Oscillators">The oscillators.</param>
public sealed record LorentzModel(double EpsInf, IReadOnlyList<Oscillator> Oscillators) : IPermittivity
{
    /// <inheritdoc />
    public double At(double xi)
    {
        double eps = EpsInf;
        foreach (Oscillator o in Oscillators) eps += o.At(xi);
        return eps;
    }
    /// <inheritdoc />
    public bool IsConductor => false;
    /// <inheritdoc />
    public double Static => At(0.0);
    /// <inheritdoc />
    public double ZeroFrequencyPlasmaSquared => 0.0;
    /// <inheritdoc />
    public string Describe() => $"Lorentz, eps_inf = {EpsInf:G6}, {Oscillators.Count} oscillators";
}
