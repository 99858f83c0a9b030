using System.Text;
using System.Text.Json;
using ForceFit.Core.Constants;
using ForceFit.Core.Problems;
using ForceFit.Theory.Geometry;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Permittivity;

namespace ForceFit.Simulation;

/// <summary>What to simulate and where to write it.</summary>
/// <param name="OutputFolder">The night folder to create (must not exist, or be empty).</param>
/// <param name="Scenario">The physics and imperfections.</param>
/// <param name="Seed">Seed of every random choice: the same seed gives the same bytes.</param>
/// <param name="Hdf5">Write .h5 data files instead of CSV.</param>
/// <param name="Columns">Column names and units: time, piezo, bias, signal.</param>
public sealed record SimulationRequest(string OutputFolder, Scenario Scenario, ulong Seed, bool Hdf5, IReadOnlyList<OutputColumn> Columns)
{
    /// <summary>The default columns for a mode: t [s], zp [nm], Ub [mV], and f_pll [Hz] or defl [V].</summary>
    public static IReadOnlyList<OutputColumn> DefaultColumns(SimulatedMode mode, bool hdf5)
    {
        string prefix = hdf5 ? "raw/" : "";
        return
        [
            new OutputColumn(prefix + "t", "s", 1e-6),
            new OutputColumn(prefix + "zp", "nm", 1e-13),
            new OutputColumn(prefix + "Ub", "mV", 1e-7),
            mode == SimulatedMode.FrequencyShift ? new OutputColumn(prefix + "f_pll", "Hz", 1e-7) : new OutputColumn(prefix + "defl", "V", 1e-8),
        ];
    }
}

/// <summary>Everything that was injected, as written to the truth file.</summary>
/// <param name="Seed">The seed.</param>
/// <param name="Scenario">All scenario parameters.</param>
/// <param name="Runs">Per-run truth and step truths.</param>
public sealed record NightTruth(ulong Seed, Scenario Scenario, IReadOnlyList<RunTruthWithSteps> Runs)
{
    /// <summary>The physical inputs the night truly had.</summary>
    public required TrueInputs Inputs { get; init; }
}

/// <summary>
/// The night's true physical inputs. The run files state the scenario's values with their uncertainties; with
/// <see cref="Imperfections.StatedInputsDrawn"/> on, the truth is drawn once per night from those statements (so
/// the comparison's bands can be checked for coverage over many nights), else it is the stated value.
/// </summary>
/// <param name="Radius">Sphere radius (m).</param>
/// <param name="Temperature">Temperature (K).</param>
/// <param name="PlasmaFrequencyEv">Plasma frequency of the gold (eV).</param>
/// <param name="DampingEv">Drude damping (eV).</param>
/// <param name="Theta">Beyond-PFA coefficient of the gradient and the force.</param>
/// <param name="Amplitude">Oscillation amplitude (m), frequency mode.</param>
public sealed record TrueInputs(double Radius, double Temperature, double PlasmaFrequencyEv, double DampingEv, double Theta, double Amplitude);

/// <summary>A run's truth and its steps.</summary>
/// <param name="Run">The run's parameters.</param>
/// <param name="Steps">Each step's (or ramp segment's) truth.</param>
public sealed record RunTruthWithSteps(RunTruth Run, IReadOnlyList<StepTruth> Steps);

/// <summary>Writes a simulated night in the run-file format, and its truth beside the night folder.</summary>
public static class NightSimulator
{
    /// <summary>The truth file of a night folder: "&lt;folder&gt;.truth.json" in the folder's parent.</summary>
    public static string TruthPath(string nightFolder)
    {
        string full = Path.GetFullPath(nightFolder).TrimEnd(Path.DirectorySeparatorChar);
        return Path.Combine(Path.GetDirectoryName(full)!, Path.GetFileName(full) + ".truth.json");
    }

    /// <summary>The night's true inputs: the stated values, or draws from their stated uncertainties (own random stream).</summary>
    public static TrueInputs DrawInputs(Scenario s, ulong seed)
    {
        var stated = new TrueInputs(s.Radius, s.Temperature, s.PlasmaFrequencyEv, s.DampingEv, 0, s.Amplitude);
        if (!s.Imperfections.StatedInputsDrawn) return stated;
        var r = new RandomSource(seed ^ 0x1A9E75UL);
        return new TrueInputs(
            s.Radius + Scenario.RadiusSigma * r.NextGaussian(),
            s.Temperature + Scenario.TemperatureSigma * r.NextGaussian(),
            s.PlasmaFrequencyEv + Scenario.PlasmaFrequencySigmaEv * r.NextGaussian(),
            Math.Max(1e-4, s.DampingEv + Scenario.DampingSigmaEv * r.NextGaussian()),
            Scenario.ThetaSigma * r.NextGaussian(),
            Math.Max(0, s.Amplitude * (1 + Scenario.AmplitudeRelativeSigma * r.NextGaussian())));
    }

    /// <summary>Simulates and writes the night; returns the truth that was written.</summary>
    public static NightTruth Simulate(SimulationRequest request)
    {
        Scenario s = request.Scenario;
        string folder = request.OutputFolder;
        if (File.Exists(folder)) throw new InputException(new Problem(folder, null, "the output folder is a file"));
        if (Directory.Exists(folder) && Directory.EnumerateFileSystemEntries(folder).Any())
            throw new InputException(new Problem(folder, null, "the output folder is not empty; choose a new folder"));
        Directory.CreateDirectory(folder);

        var random = new RandomSource(request.Seed);
        TrueInputs inputs = DrawInputs(s, request.Seed);
        double ev = Codata2018.ElectronVoltAngularFrequency.Value;
        IPermittivity gold = s.TruthTheory.Equals("plasma", StringComparison.OrdinalIgnoreCase)
            ? new PlasmaModel(inputs.PlasmaFrequencyEv * ev)
            : new DrudeModel(inputs.PlasmaFrequencyEv * ev, inputs.DampingEv * ev);
        var geometry = new SpherePlateGeometry(inputs.Radius, inputs.Theta, inputs.Theta, s.SphereRoughness * s.SphereRoughness + s.PlateRoughness * s.PlateRoughness);
        double low = Math.Max(10e-9, s.NearestGap * 0.5 - s.Amplitude * 4);
        double high = s.EffectiveReferenceGap * 1.2 + 200e-9;
        // The force tables depend only on the physics, not on the seed: nights with the same inputs share them.
        var key = new ForceKey(s.TruthTheory.ToLowerInvariant(), inputs.PlasmaFrequencyEv, inputs.DampingEv, inputs.Temperature, geometry, low, high);
        ForceModel forces = ForceTables.GetOrAdd(key, _ => new ForceModel(new LifshitzCalculator(gold, gold, inputs.Temperature), geometry, low, high));

        // One piezo per night: its true scale is drawn once from the stated 1 ± sigma.
        double piezoScale = s.Imperfections.PiezoScaleError ? 1 + s.PiezoScaleSigma * new RandomSource(request.Seed ^ 0x5CA1EUL).NextGaussian() : 1.0;
        var runs = new List<RunTruthWithSteps>();
        for (int r = 0; r < s.Runs; r++)
        {
            RandomSource runRandom = random.Fork((ulong)(r + 1));
            string name = $"run-{r + 1:D2}";
            // Each run re-approaches: z0, V0 and f0 differ a little from run to run.
            var truth = new RunTruth(
                name,
                s.GapOffset + 4e-9 * runRandom.NextGaussian(),
                piezoScale,
                s.EffectiveSpringConstant,
                s.FreeFrequency + 0.05 * runRandom.NextGaussian(),
                s.DeflectionSensitivity,
                s.DeflectionFree + 2e-3 * runRandom.NextGaussian(),
                s.ResidualPotential + 2e-3 * runRandom.NextGaussian(),
                s.ResidualPotentialGapSlope,
                s.ResidualPotentialTimeSlope,
                s.NearestGap,
                s.GapDriftRate,
                s.Mode == SimulatedMode.FrequencyShift ? inputs.Amplitude : 0);
            double biasCentre = 0.015; // the operator's estimate of V0
            IReadOnlyList<Segment> schedule = s.Protocol == SimulatedProtocol.VoltageSteps
                ? Schedules.VoltageSteps(s, s.GapOffset, biasCentre, r, runRandom.Fork(7))
                : Schedules.DistanceRamps(s, s.GapOffset, biasCentre, runRandom.Fork(7));
            var generator = new RunGenerator(s, truth, forces, runRandom.Fork(9));
            string dataName = name + (request.Hdf5 ? ".h5" : ".csv");
            string dataPath = Path.Combine(folder, dataName);
            IReadOnlyList<StepTruth> steps;
            if (request.Hdf5)
            {
                var writer = new Hdf5SampleWriter(request.Columns);
                steps = generator.Generate(schedule, writer);
                writer.Write(dataPath);
            }
            else
            {
                using var writer = new CsvSampleWriter(dataPath, request.Columns, $"simulated by forcefit simulate, seed {request.Seed}, {name}");
                steps = generator.Generate(schedule, writer);
            }
            File.WriteAllText(Path.Combine(folder, name + ".toml"), RunToml(s, dataName, request.Columns));
            runs.Add(new RunTruthWithSteps(truth, steps));
        }
        File.WriteAllText(Path.Combine(folder, "night.toml"), NightToml(s, request.Seed));
        var night = new NightTruth(request.Seed, s, runs) { Inputs = inputs };
        File.WriteAllText(TruthPath(folder), JsonSerializer.Serialize(night, JsonOptions));
        return night;
    }

    private sealed record ForceKey(string Theory, double PlasmaEv, double DampingEv, double Temperature, SpherePlateGeometry Geometry, double Low, double High);

    private static readonly System.Collections.Concurrent.ConcurrentDictionary<ForceKey, ForceModel> ForceTables = new();

    /// <summary>Options of the truth file: indented, enums as words, non-finite numbers allowed.</summary>
    public static JsonSerializerOptions JsonOptions { get; } = new()
    {
        WriteIndented = true,
        NumberHandling = System.Text.Json.Serialization.JsonNumberHandling.AllowNamedFloatingPointLiterals,
        Converters = { new System.Text.Json.Serialization.JsonStringEnumConverter() },
    };

    /// <summary>Reads a truth file back.</summary>
    public static NightTruth ReadTruth(string path) =>
        JsonSerializer.Deserialize<NightTruth>(File.ReadAllText(path), JsonOptions) ?? throw new InvalidDataException($"{path}: empty truth file");

    private static string NightToml(Scenario s, ulong seed)
    {
        bool frequency = s.Mode == SimulatedMode.FrequencyShift;
        var w = new StringBuilder();
        w.Append($"# Simulated night (forcefit simulate, seed {seed}). Invented scenario: the Tarn Valley bench.\n");
        w.Append($"# The injected truth is in the .truth.json file beside this folder.\n");
        w.Append($"title = \"Tarn Valley bench, simulated {(frequency ? "frequency-shift" : "deflection")} night, seed {seed}\"\n\n");
        w.Append("[instrument]\n");
        w.Append($"mode = \"{(frequency ? "frequency-shift" : "deflection")}\"\n");
        w.Append("spring_constant = \"auto\"\n");
        if (frequency)
        {
            w.Append("free_frequency = \"auto\"\n");
            w.Append($"amplitude = \"{Text.Q(s.Amplitude, Scenario.AmplitudeRelativeSigma * s.Amplitude, "nm")}\"\n");
        }
        else
        {
            w.Append("deflection_sensitivity = \"auto\"\n");
            w.Append("deflection_free = \"auto\"\n");
        }
        double referenceBeyond = 0.8 * s.EffectiveReferenceGap; // beyond 80% of the reference gap: force-free data
        w.Append($"reference_beyond = \"{Text.Q(Math.Round(referenceBeyond * 1e9) * 1e-9 - s.GapOffset, "nm")}\"\n\n");
        w.Append($"[sphere]\nradius = \"{Text.Q(s.Radius, Scenario.RadiusSigma, "um")}\"\n\n");
        w.Append($"[piezo]\nscale = \"1.000 ± {Text.N(s.PiezoScaleSigma)}\"\ndirection = \"away\"\n\n");
        w.Append("[surfaces]\n");
        w.Append($"temperature = \"{Text.Q(s.Temperature, Scenario.TemperatureSigma, "K")}\"\n");
        w.Append($"sphere_roughness = \"{Text.Q(s.SphereRoughness, "nm")}\"\n");
        w.Append($"plate_roughness = \"{Text.Q(s.PlateRoughness, "nm")}\"\n");
        w.Append($"pfa_correction = \"0.0 ± {Text.N(Scenario.ThetaSigma)}\"\n\n");
        w.Append($"[materials.gold-drude]\nmodel = \"drude\"\nplasma_frequency = \"{Text.N(s.PlasmaFrequencyEv)} ± {Text.N(Scenario.PlasmaFrequencySigmaEv)} eV\"\ndamping = \"{Text.N(s.DampingEv)} ± {Text.N(Scenario.DampingSigmaEv)} eV\"\n\n");
        w.Append($"[materials.gold-plasma]\nmodel = \"plasma\"\nplasma_frequency = \"{Text.N(s.PlasmaFrequencyEv)} ± {Text.N(Scenario.PlasmaFrequencySigmaEv)} eV\"\n\n");
        w.Append("[[theory]]\nname = \"Drude\"\nsphere = \"gold-drude\"\nplate = \"gold-drude\"\n\n");
        w.Append("[[theory]]\nname = \"plasma\"\nsphere = \"gold-plasma\"\nplate = \"gold-plasma\"\n");
        return w.ToString();
    }

    private static string RunToml(Scenario s, string dataName, IReadOnlyList<OutputColumn> c)
    {
        bool frequency = s.Mode == SimulatedMode.FrequencyShift;
        var w = new StringBuilder();
        w.Append($"data = \"{dataName}\"\n");
        if (s.Protocol == SimulatedProtocol.VoltageSteps)
            w.Append($"protocol = \"voltage-steps\"\nsettle = \"{Text.Q(s.Settle, "s")}\"\n");
        else
            w.Append($"protocol = \"distance-ramps\"\nbin_width = \"{Text.Q(s.BinWidth, "nm")}\"\nsettle = \"{Text.Q(s.RampSettle, "s")}\"\n");
        w.Append("\n[columns]\n");
        w.Append($"time = {{ name = \"{c[0].Name}\", unit = \"{c[0].Unit}\" }}\n");
        w.Append($"piezo = {{ name = \"{c[1].Name}\", unit = \"{c[1].Unit}\" }}\n");
        w.Append($"bias = {{ name = \"{c[2].Name}\", unit = \"{c[2].Unit}\" }}\n");
        w.Append(frequency
            ? $"frequency = {{ name = \"{c[3].Name}\", unit = \"{c[3].Unit}\" }}\n"
            : $"deflection = {{ name = \"{c[3].Name}\", unit = \"{(c[3].Unit.Length == 0 ? "1" : c[3].Unit)}\" }}\n");
        return w.ToString();
    }
}
