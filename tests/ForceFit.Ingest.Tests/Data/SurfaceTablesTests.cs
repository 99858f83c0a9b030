using ForceFit.Core.Constants;
using ForceFit.Core.Problems;
using ForceFit.Ingest.Data;
using ForceFit.Tests.Shared;

namespace ForceFit.Ingest.Tests.Data;

/// <summary>Optical-data and height-histogram CSVs: values in SI, and every bad input named by file, line and column.</summary>
public sealed class SurfaceTablesTests : TemporaryFolderTest
{
    private string Write(string name, string text)
    {
        string path = Path.Combine(Folder, name);
        File.WriteAllText(path, text);
        return path;
    }

    [Test]
    public void Optical_data_become_angular_frequencies()
    {
        string f = Write("au.csv", "# tabulated optics\nenergy_eV;n;k\n0.5;1.2;8.0\n1.0;0.9;5.5\n");
        OpticalTable t = SurfaceTables.ReadOptical(f);
        // omega = E / hbar with CODATA 2018 e/hbar.
        Assert.That(t.AngularFrequencies[1], Is.EqualTo(1.0 * Codata2018.ElectronVoltAngularFrequency.Value).Within(1e-14).Percent);
        Assert.That(t.K, Is.EqualTo(new[] { 8.0, 5.5 }));
    }

    [Test]
    public void Heights_are_taken_from_the_mean_plane_and_fractions_normalised()
    {
        string f = Write("h.csv", "height_nm,fraction\n1,1\n2,2\n3,1\n");
        HeightDistribution d = SurfaceTables.ReadHeights(f);
        Assert.That(d.HeightsMetres, Is.EqualTo(new[] { -1e-9, 0.0, 1e-9 }).Within(1e-24));
        Assert.That(d.Fractions, Is.EqualTo(new[] { 0.25, 0.5, 0.25 }));
        Assert.That(d.Variance, Is.EqualTo(0.5e-18).Within(1e-30));
    }

    [TestCase("energy_eV,n,k\n0.5,1.2,x8\n", 2, "column 'k': 'x8' is not a number")]
    [TestCase("energy_eV,n,k\n0.5,1.2,8\n1.0,NaN,5\n", 3, "column 'n': 'NaN' is not a finite number")]
    [TestCase("energy_eV,n,k\n0.5,1.2,8\n0.4,1.0,5\n", 3, "column 'energy_eV': energies must increase from row to row")]
    [TestCase("energy_eV,n,k\n-0.5,1.2,8\n0.4,1.0,5\n", 2, "column 'energy_eV': the photon energy must be positive, got -0.5")]
    [TestCase("energy_eV,n,k\n0.5,1.2,8,9\n", 2, "the row has 4 fields, the header 3")]
    [TestCase("# c\nenergy_eV,n,k\n0.5,-1.2,8\n1,1,1\n", 3, "columns 'n' and 'k' must not be negative")]
    public void Bad_optical_rows_name_the_line_and_column(string text, int line, string message)
    {
        string f = Write("bad.csv", text);
        var e = Assert.Throws<InputException>(() => SurfaceTables.ReadOptical(f))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{f}:{line}: {message}"));
    }

    [TestCase("energy,n,k\n0.5,1,1\n", "column 'energy_eV' is missing; the header has: energy, n, k")]
    [TestCase("energy_eV,n,k\n", "the file has a header but no data rows")]
    [TestCase("", "the file is empty: no header line")]
    public void Bad_optical_files_are_named(string text, string message)
    {
        string f = Write("bad.csv", text);
        var e = Assert.Throws<InputException>(() => SurfaceTables.ReadOptical(f))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{f}: {message}"));
    }

    [Test]
    public void A_negative_fraction_is_refused()
    {
        string f = Write("h.csv", "height_nm,fraction\n1,1\n2,-2\n");
        var e = Assert.Throws<InputException>(() => SurfaceTables.ReadHeights(f))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{f}:3: column 'fraction': must not be negative, got -2"));
    }
}
