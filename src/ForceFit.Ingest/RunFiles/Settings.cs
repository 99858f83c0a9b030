using ForceFit.Core.Units;

namespace ForceFit.Ingest.RunFiles;

/// <summary>What the instrument records: frequency shifts of an oscillator, or static deflections.</summary>
public enum InstrumentMode
{
    /// <summary>Dynamic mode: a resonance frequency tracked versus gap and bias ("frequency-shift").</summary>
    FrequencyShift,
    /// <summary>Static mode: the sphere's deflection ("deflection").</summary>
    Deflection,
}

/// <summary>How the night steps through gaps and biases.</summary>
public enum Protocol
{
    /// <summary>The piezo holds a position while the bias steps ("voltage-steps").</summary>
    VoltageSteps,
    /// <summary>The bias holds while the piezo ramps ("distance-ramps").</summary>
    DistanceRamps,
}

/// <summary>Sign of the piezo reading relative to the gap (physics.md: a = z0 + d s p).</summary>
public enum PiezoDirection
{
    /// <summary>d = +1: a larger reading is a larger gap.</summary>
    Away,
    /// <summary>d = -1: a larger reading is a smaller gap.</summary>
    Toward,
}

/// <summary>Permittivity models a material may use (physics.md, Lifshitz theory).</summary>
public enum MaterialModel
{
    /// <summary>1 + wp^2 / (xi (xi + gamma)).</summary>
    Drude,
    /// <summary>1 + wp^2 / xi^2.</summary>
    Plasma,
    /// <summary>Plasma term plus oscillators.</summary>
    GeneralizedPlasma,
    /// <summary>eps_inf plus oscillators (dielectrics).</summary>
    Lorentz,
    /// <summary>Tabulated n, k through Kramers–Kronig, with a Drude or plasma tail.</summary>
    OpticalData,
}

/// <summary>Instrument settings. A null calibration value means "auto": determined from the data.</summary>
/// <param name="Mode">Frequency-shift or deflection.</param>
/// <param name="SpringConstant">Effective k in N/m, or null for auto (electrostatic calibration).</param>
/// <param name="FreeFrequency">f0 in Hz, or null for auto (reference steps).</param>
/// <param name="ReferenceBeyond">Piezo readings beyond this (m) hold force-free reference data; null if not given.</param>
/// <param name="Amplitude">Oscillation amplitude (m), frequency mode; 0 for none.</param>
/// <param name="DeflectionSensitivity">m in metres per signal unit (SI signal unit), or null for auto.</param>
/// <param name="DeflectionFree">S_free in the SI signal unit, or null for auto.</param>
public sealed record InstrumentSettings(
    InstrumentMode Mode,
    Measurement? SpringConstant,
    Measurement? FreeFrequency,
    Measurement? ReferenceBeyond,
    Measurement Amplitude,
    Measurement? DeflectionSensitivity,
    Measurement? DeflectionFree);

/// <summary>The sphere.</summary>
/// <param name="Radius">R in metres.</param>
public sealed record SphereSettings(Measurement Radius);

/// <summary>The piezo's conversion to gap.</summary>
/// <param name="Scale">s, dimensionless.</param>
/// <param name="Direction">d.</param>
public sealed record PiezoSettings(Measurement Scale, PiezoDirection Direction)
{
    /// <summary>d = +1 for away, -1 for toward.</summary>
    public int Sign => Direction == PiezoDirection.Away ? 1 : -1;
}

/// <summary>A surface's roughness: an rms value, or a measured height-distribution CSV.</summary>
/// <param name="Rms">The rms height (m), when given as a quantity.</param>
/// <param name="HistogramPath">The resolved path of a height-histogram CSV, when given as a file.</param>
public sealed record Roughness(Measurement? Rms, string? HistogramPath)
{
    /// <summary>A perfectly smooth surface.</summary>
    public static Roughness None { get; } = new(Measurement.Exact(0, Dimension.Length), null);
}

/// <summary>Surface conditions.</summary>
/// <param name="Temperature">T in kelvin.</param>
/// <param name="SphereRoughness">The sphere's roughness.</param>
/// <param name="PlateRoughness">The plate's roughness.</param>
/// <param name="PfaCorrection">theta for the force gradient, first order in a/R.</param>
public sealed record SurfaceSettings(Measurement Temperature, Roughness SphereRoughness, Roughness PlateRoughness, Measurement PfaCorrection);

/// <summary>One oscillator term g / (w^2 + xi^2 + gamma xi), all in SI (rad/s).</summary>
/// <param name="Strength">g in (rad/s)^2.</param>
/// <param name="Frequency">w in rad/s.</param>
/// <param name="Damping">gamma in rad/s.</param>
public sealed record OscillatorSettings(Measurement Strength, Measurement Frequency, Measurement Damping);

/// <summary>A material named in [materials.NAME].</summary>
/// <param name="Name">The table's name.</param>
/// <param name="Model">The permittivity model.</param>
/// <param name="PlasmaFrequency">wp in rad/s (drude, plasma, generalized-plasma, optical-data tail).</param>
/// <param name="Damping">gamma in rad/s (drude, optical-data drude tail).</param>
/// <param name="Oscillators">Oscillator terms (generalized-plasma, lorentz).</param>
/// <param name="EpsInf">Constant background (lorentz); 1 when not given.</param>
/// <param name="TablePath">Resolved path of the optical-data CSV.</param>
/// <param name="Tail">Model below the table's first energy (drude or plasma), optical-data only.</param>
public sealed record MaterialSettings(
    string Name,
    MaterialModel Model,
    Measurement? PlasmaFrequency,
    Measurement? Damping,
    IReadOnlyList<OscillatorSettings> Oscillators,
    Measurement EpsInf,
    string? TablePath,
    MaterialModel? Tail);

/// <summary>One [[theory]] entry: a prediction to compare with.</summary>
/// <param name="Name">Shown in tables and figures.</param>
/// <param name="Sphere">Material name of the sphere.</param>
/// <param name="Plate">Material name of the plate.</param>
public sealed record TheorySettings(string Name, string Sphere, string Plate);

/// <summary>A data-file column (CSV header or HDF5 dataset path) and its unit.</summary>
/// <param name="Name">Header name or dataset path.</param>
/// <param name="Unit">The unit the file uses; values are multiplied by <see cref="Unit.ToSi"/>.</param>
public sealed record ColumnSettings(string Name, Unit Unit);

/// <summary>Which columns hold which channel.</summary>
/// <param name="Time">Time.</param>
/// <param name="Piezo">Piezo reading.</param>
/// <param name="Bias">Applied bias.</param>
/// <param name="Frequency">Tracked frequency (frequency-shift mode).</param>
/// <param name="Deflection">Deflection signal (deflection mode).</param>
public sealed record ColumnsSettings(ColumnSettings Time, ColumnSettings Piezo, ColumnSettings Bias, ColumnSettings? Frequency, ColumnSettings? Deflection)
{
    /// <summary>The mapped columns in channel order, with channel names.</summary>
    public IEnumerable<(string Channel, ColumnSettings Column)> Mapped()
    {
        yield return ("time", Time);
        yield return ("piezo", Piezo);
        yield return ("bias", Bias);
        if (Frequency is not null) yield return ("frequency", Frequency);
        if (Deflection is not null) yield return ("deflection", Deflection);
    }
}

/// <summary>What theory needs: the geometry, surfaces, materials and the theories to compute.</summary>
/// <param name="Title">Free text.</param>
/// <param name="Sphere">Sphere.</param>
/// <param name="Surfaces">Surfaces.</param>
/// <param name="Materials">Materials by name.</param>
/// <param name="Theories">Theories in file order.</param>
public sealed record TheoryInputs(
    string Title,
    SphereSettings Sphere,
    SurfaceSettings Surfaces,
    IReadOnlyDictionary<string, MaterialSettings> Materials,
    IReadOnlyList<TheorySettings> Theories);

/// <summary>Every resolved setting of one run.</summary>
/// <param name="Name">The run's name (its .toml file name without extension).</param>
/// <param name="RunFile">The run's .toml path.</param>
/// <param name="NightFile">The night.toml merged under it, if any.</param>
/// <param name="Instrument">Instrument.</param>
/// <param name="Piezo">Piezo.</param>
/// <param name="Theory">Sphere, surfaces, materials, theories.</param>
/// <param name="DataFile">Resolved path of the raw data.</param>
/// <param name="Protocol">Protocol.</param>
/// <param name="Settle">Time discarded at the start of each step (voltage-steps).</param>
/// <param name="BinWidth">Gap bin width (distance-ramps).</param>
/// <param name="Columns">Column mapping.</param>
public sealed record RunSettings(
    string Name,
    string RunFile,
    string? NightFile,
    InstrumentSettings Instrument,
    PiezoSettings Piezo,
    TheoryInputs Theory,
    string DataFile,
    Protocol Protocol,
    Measurement? Settle,
    Measurement? BinWidth,
    ColumnsSettings Columns);

/// <summary>A night: its folder and runs, sorted by name.</summary>
/// <param name="Folder">The night folder.</param>
/// <param name="Runs">The runs.</param>
public sealed record NightSettings(string Folder, IReadOnlyList<RunSettings> Runs);
