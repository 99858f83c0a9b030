using ForceFit.Core.Problems;
using ForceFit.Ingest.Data;
using ForceFit.Ingest.RunFiles;
using ForceFit.Theory.Geometry;
using ForceFit.Theory.Lifshitz;
using ForceFit.Theory.Permittivity;

namespace ForceFit.Analysis.Theory;

/// <summary>One row of `forcefit theory`: a theory at one separation (SI).</summary>
/// <param name="Theory">The [[theory]] name.</param>
/// <param name="Separation">a in m.</param>
/// <param name="Pressure">Plate–plate pressure in Pa.</param>
/// <param name="FreeEnergy">Plate–plate free energy per area in J/m^2.</param>
/// <param name="Force">Sphere–plate force in N.</param>
/// <param name="ForceGradient">Sphere–plate force gradient in N/m.</param>
/// <param name="ForceThirdDerivative">Sphere–plate d³F/da³ in N/m³.</param>
/// <param name="PressureError">Numerical error estimate of the pressure in Pa.</param>
public sealed record TheoryRow(string Theory, double Separation, double Pressure, double FreeEnergy, double Force, double ForceGradient, double ForceThirdDerivative, double PressureError);

/// <summary>A theory ready to evaluate: the Lifshitz calculator for its materials and the sphere–plate geometry.</summary>
/// <param name="Name">The [[theory]] name.</param>
/// <param name="Calculator">Lifshitz calculator for plate and sphere materials at the night's temperature.</param>
/// <param name="Geometry">Radius, beyond-PFA coefficient and rms roughness.</param>
/// <param name="Heights">The combined height distribution when a surface is given as a histogram (geometrical averaging), else null.</param>
public sealed record PreparedTheory(string Name, LifshitzCalculator Calculator, SpherePlateGeometry Geometry, HeightDistribution? Heights)
{
    /// <summary>Evaluates the theory at a separation.</summary>
    public TheoryRow At(double a)
    {
        LifshitzResult plates = Heights is null ? Calculator.At(a) : GeometricallyAveraged(a);
        SpherePlateResult s = SpherePlate.FromLifshitz(a, plates, Geometry);
        return new TheoryRow(Name, a, s.Pressure, s.FreeEnergy, s.Force, s.ForceGradient, s.ForceThirdDerivative, plates.PressureError);
    }

    // Geometrical averaging over the combined height distribution (SpherePlate.GeometricAverage); touching surfaces
    // are an input problem of the histograms, reported before any theory is computed.
    private LifshitzResult GeometricallyAveraged(double a)
    {
        double highest = Heights!.HeightsMetres.Max();
        if (a - highest <= 0)
            throw new InputException(new Problem("height histograms", null, $"the surfaces touch at a separation of {a * 1e9:G4} nm: the height distributions reach {highest * 1e9:G4} nm"));
        return SpherePlate.GeometricAverage(Calculator.At, a, Heights.HeightsMetres.Zip(Heights.Fractions).ToArray());
    }
}

/// <summary>Builds theory objects from validated settings (reads optical-data and height-histogram files).</summary>
public static class TheoryModels
{
    /// <summary>The permittivity model of a material.</summary>
    public static IPermittivity Permittivity(MaterialSettings m) => m.Model switch
    {
        MaterialModel.Drude => new DrudeModel(m.PlasmaFrequency!.Value.Value, m.Damping!.Value.Value),
        MaterialModel.Plasma => new PlasmaModel(m.PlasmaFrequency!.Value.Value),
        MaterialModel.GeneralizedPlasma => new GeneralizedPlasmaModel(m.PlasmaFrequency!.Value.Value, Oscillators(m)),
        MaterialModel.Lorentz => new LorentzModel(m.EpsInf.Value, Oscillators(m)),
        MaterialModel.OpticalData => Optical(m),
        _ => throw new ArgumentOutOfRangeException(nameof(m)),
    };

    private static Oscillator[] Oscillators(MaterialSettings m) =>
        m.Oscillators.Select(o => new Oscillator(o.Strength.Value, o.Frequency.Value, o.Damping.Value)).ToArray();

    private static OpticalDataModel Optical(MaterialSettings m)
    {
        OpticalTable table = FileCache.Get(m.TablePath!, SurfaceTables.ReadOptical);
        OpticalTail tail = m.Tail == MaterialModel.Plasma ? OpticalTail.Plasma : OpticalTail.Drude;
        return new OpticalDataModel(table.AngularFrequencies, table.N, table.K, tail, m.PlasmaFrequency!.Value.Value, m.Damping?.Value ?? 0);
    }

    /// <summary>
    /// Prepares every [[theory]]: permittivities (one object per material, shared), Lifshitz calculators at the
    /// night's temperature, PFA with theta applied to the gradient and, as an assumption stated in the report,
    /// to the force; rms roughness by the second-order formula, or geometrical averaging when a surface is
    /// given as a measured histogram (an rms-only surface then enters as a Gaussian of that rms).
    /// </summary>
    public static IReadOnlyList<PreparedTheory> Prepare(TheoryInputs inputs)
    {
        var materials = new Dictionary<string, IPermittivity>(StringComparer.Ordinal);
        IPermittivity Material(string name) => materials.TryGetValue(name, out var p) ? p : materials[name] = Permittivity(inputs.Materials[name]);
        double radius = inputs.Sphere.Radius.Value;
        double theta = inputs.Surfaces.PfaCorrection.Value;
        HeightDistribution? heights = CombinedHeights(inputs.Surfaces, out double rmsVariance);
        var geometry = new SpherePlateGeometry(radius, theta, theta, heights is null ? rmsVariance : 0);
        return inputs.Theories
            .Select(t => new PreparedTheory(t.Name, new LifshitzCalculator(Material(t.Plate), Material(t.Sphere), inputs.Surfaces.Temperature.Value), geometry, heights))
            .ToArray();
    }

    /// <summary>
    /// A text that is equal for two inputs exactly when they prepare the same theories: the sphere's radius, the surfaces
    /// (temperature, roughness, theta), and each theory's two materials in full (with the size and time of any file they
    /// read); the title and the theories' names do not enter. Runs of a night share the night's theory settings, so a
    /// cache keyed by it computes each theory once per night.
    /// </summary>
    public static string Fingerprint(TheoryInputs inputs)
    {
        static string Stamp(string? path)
        {
            if (path is null) return "-";
            var info = new FileInfo(path);
            return $"{Path.GetFullPath(path)}|{(info.Exists ? info.Length : -1)}|{(info.Exists ? info.LastWriteTimeUtc.Ticks : 0)}";
        }
        static string Surface(Roughness r) => $"{r.Rms}|{Stamp(r.HistogramPath)}";
        string Material(string name)
        {
            MaterialSettings m = inputs.Materials[name];
            string oscillators = string.Join(";", m.Oscillators.Select(o => $"{o.Strength}/{o.Frequency}/{o.Damping}"));
            return $"{m.Model}|{m.PlasmaFrequency}|{m.Damping}|{oscillators}|{m.EpsInf}|{Stamp(m.TablePath)}|{m.Tail}";
        }
        SurfaceSettings s = inputs.Surfaces;
        var parts = new List<string> { $"{inputs.Sphere.Radius}", $"{s.Temperature}", Surface(s.SphereRoughness), Surface(s.PlateRoughness), $"{s.PfaCorrection}" };
        parts.AddRange(inputs.Theories.Select(t => $"{Material(t.Sphere)}#{Material(t.Plate)}"));
        return string.Join("\n", parts);
    }

    /// <summary>Evaluates every theory at every separation, in parallel over separations; rows ordered by theory then separation.</summary>
    public static IReadOnlyList<TheoryRow> Evaluate(IReadOnlyList<PreparedTheory> theories, IReadOnlyList<double> separations)
    {
        var rows = new TheoryRow[theories.Count * separations.Count];
        Parallel.For(0, rows.Length, i => rows[i] = theories[i / separations.Count].At(separations[i % separations.Count]));
        return rows;
    }

    private static HeightDistribution? CombinedHeights(SurfaceSettings s, out double rmsVariance)
    {
        double Rms(Roughness r) => r.Rms?.Value ?? 0;
        rmsVariance = Math.Pow(Rms(s.SphereRoughness), 2) + Math.Pow(Rms(s.PlateRoughness), 2);
        if (s.SphereRoughness.HistogramPath is null && s.PlateRoughness.HistogramPath is null) return null;
        HeightDistribution Of(Roughness r) => r.HistogramPath is { } path ? FileCache.Get(path, SurfaceTables.ReadHeights) : Gaussian(Rms(r));
        return RoughnessAveraging.Combine(Of(s.SphereRoughness), Of(s.PlateRoughness), bins: 64);
    }

    private static HeightDistribution Gaussian(double rms)
    {
        if (rms == 0) return new HeightDistribution([0.0], [1.0]);
        var h = Enumerable.Range(-40, 81).Select(i => i * rms / 10).ToArray();
        var w = h.Select(x => Math.Exp(-x * x / (2 * rms * rms))).ToArray();
        double total = w.Sum();
        return new HeightDistribution(h, w.Select(v => v / total).ToArray());
    }
}

/// <summary>
/// Tables read from files, kept by path, size and modification time, so that the Monte Carlo draws of a comparison
/// (which prepare the theories again for every draw) read each optical-data or height table once.
/// </summary>
internal static class FileCache
{
    private static readonly System.Collections.Concurrent.ConcurrentDictionary<(string, long, DateTime, Type), object> Tables = new();

    public static T Get<T>(string path, Func<string, T> read) where T : class
    {
        var info = new FileInfo(path);
        var key = (Path.GetFullPath(path), info.Exists ? info.Length : -1, info.Exists ? info.LastWriteTimeUtc : default, typeof(T));
        if (Tables.TryGetValue(key, out object? found)) return (T)found;
        T value = read(path);
        Tables[key] = value;
        return value;
    }
}

/// <summary>Combination of two surfaces' height distributions for geometrical averaging.</summary>
public static class RoughnessAveraging
{
    /// <summary>
    /// The distribution of h1 + h2 (independent surfaces: the discrete convolution), re-binned into at most
    /// <paramref name="bins"/> equal-width bins, each represented by its weighted mean height so that the mean is
    /// kept exactly and the variance loses only the within-bin part.
    /// </summary>
    public static HeightDistribution Combine(HeightDistribution a, HeightDistribution b, int bins)
    {
        var heights = new List<double>();
        var weights = new List<double>();
        for (int i = 0; i < a.HeightsMetres.Length; i++)
            for (int j = 0; j < b.HeightsMetres.Length; j++)
            {
                heights.Add(a.HeightsMetres[i] + b.HeightsMetres[j]);
                weights.Add(a.Fractions[i] * b.Fractions[j]);
            }
        double min = heights.Min(), max = heights.Max();
        if (max - min <= 0 || heights.Count <= bins) return new HeightDistribution(heights.ToArray(), weights.ToArray());
        var sumW = new double[bins];
        var sumWH = new double[bins];
        double width = (max - min) / bins;
        for (int k = 0; k < heights.Count; k++)
        {
            int bin = Math.Min(bins - 1, (int)((heights[k] - min) / width));
            sumW[bin] += weights[k];
            sumWH[bin] += weights[k] * heights[k];
        }
        var h = new List<double>();
        var w = new List<double>();
        for (int k = 0; k < bins; k++)
        {
            if (sumW[k] <= 0) continue;
            h.Add(sumWH[k] / sumW[k]);
            w.Add(sumW[k]);
        }
        return new HeightDistribution(h.ToArray(), w.ToArray());
    }
}
