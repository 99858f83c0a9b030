using ForceFit.Core.Units;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Analysis.Comparison;

/// <summary>
/// One uncertain input of the theory: its name, standard uncertainty and how to shift it in the settings.
/// </summary>
/// <param name="Name">Shown in the budget and the report ("radius", "temperature", "plasma frequency (gold)", ...).</param>
/// <param name="Sigma">Standard uncertainty in SI.</param>
/// <param name="Shift">Returns the settings with this input moved by the given amount (SI).</param>
public sealed record TheoryParameter(string Name, double Sigma, Func<TheoryInputs, double, TheoryInputs> Shift);

/// <summary>The uncertain theory inputs of a night's settings: every stated ± that the prediction depends on.</summary>
public static class TheoryParameters
{
    /// <summary>The name of the sphere radius, shared with the experimental "radius" systematic (the same sphere).</summary>
    public const string Radius = "radius";

    /// <summary>Every input with a non-zero uncertainty, in a fixed order.</summary>
    public static IReadOnlyList<TheoryParameter> Of(TheoryInputs inputs)
    {
        var list = new List<TheoryParameter>();
        void Add(string name, double sigma, Func<TheoryInputs, double, TheoryInputs> shift)
        {
            if (sigma > 0) list.Add(new TheoryParameter(name, sigma, shift));
        }
        Add(Radius, inputs.Sphere.Radius.Sigma, (t, d) => t with { Sphere = new SphereSettings(Moved(t.Sphere.Radius, d)) });
        Add("temperature", inputs.Surfaces.Temperature.Sigma, (t, d) => t with { Surfaces = t.Surfaces with { Temperature = Moved(t.Surfaces.Temperature, d) } });
        Add("beyond-PFA coefficient", inputs.Surfaces.PfaCorrection.Sigma, (t, d) => t with { Surfaces = t.Surfaces with { PfaCorrection = t.Surfaces.PfaCorrection with { Value = t.Surfaces.PfaCorrection.Value + d } } });
        if (inputs.Surfaces.SphereRoughness is { Rms: { } sphereRms, HistogramPath: null })
            Add("sphere roughness", sphereRms.Sigma, (t, d) => t with { Surfaces = t.Surfaces with { SphereRoughness = new Roughness(Moved(t.Surfaces.SphereRoughness.Rms!.Value, d), null) } });
        if (inputs.Surfaces.PlateRoughness is { Rms: { } plateRms, HistogramPath: null })
            Add("plate roughness", plateRms.Sigma, (t, d) => t with { Surfaces = t.Surfaces with { PlateRoughness = new Roughness(Moved(t.Surfaces.PlateRoughness.Rms!.Value, d), null) } });
        // Only materials that some theory uses.
        var used = inputs.Theories.SelectMany(t => new[] { t.Sphere, t.Plate }).Distinct(StringComparer.Ordinal).Order(StringComparer.Ordinal);
        foreach (string name in used)
        {
            MaterialSettings m = inputs.Materials[name];
            if (m.PlasmaFrequency is { } wp)
                Add($"plasma frequency ({name})", wp.Sigma, (t, d) => WithMaterial(t, name, x => x with { PlasmaFrequency = Moved(x.PlasmaFrequency!.Value, d) }));
            if (m.Damping is { } gamma)
                Add($"damping ({name})", gamma.Sigma, (t, d) => WithMaterial(t, name, x => x with { Damping = Moved(x.Damping!.Value, d) }));
        }
        return list;
    }

    // Physical inputs stay positive (a draw far in the tail of a large relative uncertainty is clipped, not negated).
    private static Measurement Moved(Measurement m, double d) => m with { Value = Math.Max(m.Value + d, 1e-3 * Math.Abs(m.Value)) };

    private static TheoryInputs WithMaterial(TheoryInputs t, string name, Func<MaterialSettings, MaterialSettings> change)
    {
        var materials = t.Materials.ToDictionary(kv => kv.Key, kv => kv.Key == name ? change(kv.Value) : kv.Value, StringComparer.Ordinal);
        return t with { Materials = materials };
    }
}
