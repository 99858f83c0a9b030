using ForceFit.Core.Units;

namespace ForceFit.Core.Constants;

/// <summary>A physical constant with its standard uncertainty and where the value comes from.</summary>
/// <param name="Name">Plain name.</param>
/// <param name="Symbol">Usual symbol.</param>
/// <param name="Value">Value in SI.</param>
/// <param name="Uncertainty">Standard uncertainty in SI (0 for exact constants).</param>
/// <param name="Unit">SI unit as text.</param>
/// <param name="Reference">Source of the value, or how it is derived.</param>
public sealed record PhysicalConstant(string Name, string Symbol, double Value, double Uncertainty, string Unit, string Reference)
{
    /// <summary>True for constants fixed exactly by the 2019 SI (and values derived from them only).</summary>
    public bool IsExact => Uncertainty == 0;
}

/// <summary>
/// CODATA 2018 recommended values (E. Tiesinga, P. J. Mohr, D. B. Newell, B. N. Taylor,
/// Rev. Mod. Phys. 93, 025010 (2021)). Derived values are computed here from the defining ones.
/// </summary>
public static class Codata2018
{
    private const string Source = "CODATA 2018, Rev. Mod. Phys. 93, 025010 (2021)";

    /// <summary>Speed of light in vacuum, exact.</summary>
    public static readonly PhysicalConstant SpeedOfLight = new("speed of light in vacuum", "c", 299792458.0, 0, "m s^-1", Source + ", exact");

    /// <summary>Planck constant, exact.</summary>
    public static readonly PhysicalConstant Planck = new("Planck constant", "h", 6.62607015e-34, 0, "J s", Source + ", exact");

    /// <summary>Reduced Planck constant hbar = h / (2 pi), derived (exact).</summary>
    public static readonly PhysicalConstant ReducedPlanck = new("reduced Planck constant", "hbar", Planck.Value / (2.0 * Math.PI), 0, "J s", "h / (2 pi), from " + Source);

    /// <summary>Elementary charge, exact.</summary>
    public static readonly PhysicalConstant ElementaryCharge = new("elementary charge", "e", 1.602176634e-19, 0, "C", Source + ", exact");

    /// <summary>Boltzmann constant, exact.</summary>
    public static readonly PhysicalConstant Boltzmann = new("Boltzmann constant", "k_B", 1.380649e-23, 0, "J K^-1", Source + ", exact");

    /// <summary>Vacuum electric permittivity, 8.8541878128(13)e-12 F/m.</summary>
    public static readonly PhysicalConstant VacuumPermittivity = new("vacuum electric permittivity", "epsilon_0", 8.8541878128e-12, 0.0000000013e-12, "F m^-1", Source);

    /// <summary>Vacuum magnetic permeability, 1.25663706212(19)e-6 N/A^2.</summary>
    public static readonly PhysicalConstant VacuumPermeability = new("vacuum magnetic permeability", "mu_0", 1.25663706212e-6, 0.00000000019e-6, "N A^-2", Source);

    /// <summary>Angular frequency of a 1 eV photon, e / hbar in rad/s, derived (exact).</summary>
    public static readonly PhysicalConstant ElectronVoltAngularFrequency = new("angular frequency of 1 eV", "e/hbar", ElementaryCharge.Value / ReducedPlanck.Value, 0, "rad s^-1 eV^-1", "e / hbar, from " + Source);

    /// <summary>All constants, for listing in reports.</summary>
    public static IReadOnlyList<PhysicalConstant> All { get; } =
        [SpeedOfLight, Planck, ReducedPlanck, ElementaryCharge, Boltzmann, VacuumPermittivity, VacuumPermeability, ElectronVoltAngularFrequency];

    /// <summary>The value of a constant as a measurement of the given dimension.</summary>
    public static Measurement AsMeasurement(this PhysicalConstant constant, Dimension dimension) =>
        new(constant.Value, constant.Uncertainty, dimension);
}
