using ForceFit.Core.Constants;
using ForceFit.Core.Problems;

namespace ForceFit.Ingest.Data;

/// <summary>Tabulated optical constants in SI: angular frequency (rad/s), n and k.</summary>
/// <param name="AngularFrequencies">omega = E / hbar, increasing.</param>
/// <param name="N">Refractive index.</param>
/// <param name="K">Extinction coefficient.</param>
public sealed record OpticalTable(double[] AngularFrequencies, double[] N, double[] K);

/// <summary>A surface's height distribution relative to its mean plane: heights in m and their fractions (sum 1).</summary>
/// <param name="HeightsMetres">Heights measured from the mean plane, toward the other surface.</param>
/// <param name="Fractions">Fractions of the area, summing to 1.</param>
public sealed record HeightDistribution(double[] HeightsMetres, double[] Fractions)
{
    /// <summary>The variance of the heights (m^2).</summary>
    public double Variance => HeightsMetres.Zip(Fractions, (h, v) => v * h * h).Sum();
}

/// <summary>Readers of the small CSV tables that describe surfaces: optical data and height histograms.</summary>
public static class SurfaceTables
{
    /// <summary>
    /// An optical-data CSV with columns energy_eV, n, k (run-files.md); photon energies increasing and positive,
    /// n and k not negative.
    /// </summary>
    public static OpticalTable ReadOptical(string file)
    {
        NumericTable t = NumericTable.Read(file, ["energy_eV", "n", "k"]);
        double[] e = t.Columns["energy_eV"], n = t.Columns["n"], k = t.Columns["k"];
        for (int i = 0; i < t.Count; i++)
        {
            if (!(e[i] > 0)) throw new InputException(new Problem(file, t.Lines[i], $"column 'energy_eV': the photon energy must be positive, got {e[i]}"));
            if (i > 0 && !(e[i] > e[i - 1])) throw new InputException(new Problem(file, t.Lines[i], "column 'energy_eV': energies must increase from row to row"));
            if (n[i] < 0 || k[i] < 0) throw new InputException(new Problem(file, t.Lines[i], "columns 'n' and 'k' must not be negative"));
        }
        if (t.Count < 2) throw new InputException(new Problem(file, null, "optical data need at least two rows"));
        double toRadPerSecond = Codata2018.ElectronVoltAngularFrequency.Value;
        return new OpticalTable(e.Select(x => x * toRadPerSecond).ToArray(), n, k);
    }

    /// <summary>
    /// A height-histogram CSV with columns height_nm and fraction (any non-negative weights; they are normalised).
    /// Heights are taken relative to the histogram's weighted mean, which defines the surface's mean plane.
    /// </summary>
    public static HeightDistribution ReadHeights(string file)
    {
        NumericTable t = NumericTable.Read(file, ["height_nm", "fraction"]);
        double[] h = t.Columns["height_nm"], w = t.Columns["fraction"];
        for (int i = 0; i < t.Count; i++)
            if (w[i] < 0) throw new InputException(new Problem(file, t.Lines[i], $"column 'fraction': must not be negative, got {w[i]}"));
        double total = w.Sum();
        if (!(total > 0)) throw new InputException(new Problem(file, null, "column 'fraction': the fractions add up to zero"));
        double mean = h.Zip(w, (x, v) => x * v).Sum() / total;
        return new HeightDistribution(h.Select(x => (x - mean) * 1e-9).ToArray(), w.Select(v => v / total).ToArray());
    }
}
