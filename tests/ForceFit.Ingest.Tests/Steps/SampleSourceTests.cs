using System.Globalization;
using ForceFit.Core.Problems;
using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;
using ForceFit.Ingest.Streams;
using ForceFit.Simulation;
using ForceFit.Tests.Shared;
using PureHDF;

namespace ForceFit.Ingest.Tests.Steps;

/// <summary>Readers of raw data: every bad input named by file, line and column; CSV and HDF5 agree.</summary>
public sealed class SampleSourceTests : TemporaryFolderTest
{
    private RunSettings Run(string csv)
    {
        File.WriteAllText(Path.Combine(Folder, "run.csv"), csv);
        string baseRun = File.ReadAllText(Path.Combine(MalformedRunFiles.Folder, "_base-run.txt")).Replace("../data/good.csv", "run.csv");
        File.WriteAllText(Path.Combine(Folder, "run.toml"), baseRun);
        return RunFileReader.ReadNight(Path.Combine(Folder, "run.toml")).Runs.Single();
    }

    private static List<double[]> ReadAll(RunSettings run, out IReadOnlyList<string> warnings)
    {
        using ISampleSource source = SampleSources.Open(run);
        var rows = new List<double[]>();
        while (source.Next() is { } block)
            for (int i = 0; i < block.Count; i++) rows.Add([block.Time[i], block.Piezo[i], block.Bias[i], block.Signal[i]]);
        warnings = source.Warnings;
        return rows;
    }

    [Test]
    public void Values_are_converted_to_SI_in_the_columns_units()
    {
        // _base-run.txt maps t [s], zp [nm], Ub [mV], f_pll [Hz].
        var rows = ReadAll(Run("t,zp,Ub,f_pll\n0.5,300.25,20,25000.5\n0.6,300.5,-20,25000.25\n"), out _);
        Assert.That(rows[0], Is.EqualTo(new[] { 0.5, 300.25e-9, 0.020, 25000.5 }).Within(1e-12).Percent);
        Assert.That(rows[1][2], Is.EqualTo(-0.020).Within(1e-12).Percent);
    }

    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300,x20,25000\n", 3, "column 'Ub': 'x20' is not a number")]
    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300.25.5,20,25000\n", 3, "column 'zp': '300.25.5' is not a number")]
    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300,-,25000\n", 3, "column 'Ub': '-' is not a number")]
    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300,20,2500a.25\n", 3, "column 'f_pll': '2500a.25' is not a number")]
    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,NaN\n0.1,300,20,25000\n", 2, "column 'f_pll': 'NaN' is not a finite number")]
    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,Infinity\n0.1,300,20,25000\n", 2, "column 'f_pll': 'Infinity' is not a finite number")]
    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.0,300,20,25000\n", 3, "column 't': time does not increase (0 after the value on line 2)")]
    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300,20\n0.2,300,20,25000\n", 3, "the row has 3 fields, the header 4")]
    [TestCase("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300,,25000\n", 3, "column 'Ub': the cell is empty")]
    [TestCase("# comment\nt,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300,20,25000,9\n", 4, "the row has 5 fields, the header 4")]
    public void Bad_cells_and_rows_name_the_file_line_and_column(string csv, int line, string message)
    {
        RunSettings run = Run(csv);
        var e = Assert.Throws<InputException>(() => ReadAll(run, out _))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{run.DataFile}:{line}: {message}"));
    }

    [Test]
    public void A_truncated_last_line_is_dropped_with_a_warning()
    {
        RunSettings run = Run("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300,20,25000\n0.2,30");
        var rows = ReadAll(run, out var warnings);
        Assert.That(rows, Has.Count.EqualTo(2));
        Assert.That(warnings.Single(), Is.EqualTo($"{run.DataFile}:4: the last line is incomplete (the row has 2 fields, the header 4); it was dropped"));
    }

    [Test]
    public void A_missing_column_lists_the_available_ones()
    {
        RunSettings run = Run("t,zp,U_b,f_pll\n0.0,300,20,25000\n");
        var e = Assert.Throws<InputException>(() => ReadAll(run, out _))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{run.DataFile}:1: column 'Ub' mapped to bias in {run.RunFile} is not in the file (did you mean 'U_b'?); available: t, zp, U_b, f_pll"));
    }

    [Test]
    public void An_empty_file_and_a_header_without_rows_are_reported()
    {
        RunSettings run = Run("t,zp,Ub,f_pll\n");
        var e = Assert.Throws<InputException>(() => RunSteps.Read(run))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{run.DataFile}: the file has a header but no data rows"));
        File.WriteAllText(run.DataFile, "");
        e = Assert.Throws<InputException>(() => RunSteps.Read(run))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{run.DataFile}: the file is empty: no header line"));
    }

    [Test]
    public void Semicolons_tabs_comments_and_quoted_headers_read_the_same_values()
    {
        var comma = ReadAll(Run("t,zp,Ub,f_pll\n0.5,300.25,20,25000.5\n"), out _);
        var semicolon = ReadAll(Run("# logger\n\"t\";\"zp\";\"Ub\";\"f_pll\"\n0.5;300.25;20;25000.5\n"), out _);
        var tab = ReadAll(Run("t\tzp\tUb\tf_pll\n0.5\t300.25\t20\t25000.5\n"), out _);
        Assert.That(semicolon, Is.EqualTo(comma));
        Assert.That(tab, Is.EqualTo(comma));
    }

    [Test]
    public void The_input_file_is_not_changed()
    {
        RunSettings run = Run("t,zp,Ub,f_pll\n0.0,300,20,25000\n0.1,300,20,25000\n");
        byte[] before = File.ReadAllBytes(run.DataFile);
        ReadAll(run, out _);
        Assert.That(File.ReadAllBytes(run.DataFile), Is.EqualTo(before));
    }

    [Test]
    public void Csv_and_hdf5_holding_the_same_numbers_give_identical_step_statistics()
    {
        var scenario = new Scenario { Runs = 1, Positions = 5, Biases = 3, StepDuration = 1.0, SampleRate = 200 };
        string night = Path.Combine(Folder, "night");
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 9, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        RunSettings csvRun = RunFileReader.ReadNight(night).Runs.Single();
        // The same numbers, as written in the CSV (file units), into HDF5 datasets with unit attributes.
        string[] lines = File.ReadAllLines(csvRun.DataFile).Where(l => !l.StartsWith('#')).Skip(1).ToArray();
        double[][] columns = Enumerable.Range(0, 4).Select(c => lines.Select(l => double.Parse(l.Split(',')[c], CultureInfo.InvariantCulture)).ToArray()).ToArray();
        string[] units = ["s", "nm", "mV", "Hz"];
        string[] names = ["t", "zp", "Ub", "f_pll"];
        var raw = new H5Group();
        for (int c = 0; c < 4; c++) raw[names[c]] = new H5Dataset(columns[c]) { Attributes = new() { ["unit"] = units[c] } };
        new H5File { ["raw"] = raw }.Write(Path.Combine(night, "run-01.h5"));
        string toml = File.ReadAllText(csvRun.RunFile).Replace("run-01.csv", "run-01.h5");
        foreach (string n in names) toml = toml.Replace($"name = \"{n}\"", $"name = \"raw/{n}\"");
        File.WriteAllText(Path.Combine(night, "run-01h5.toml"), toml);
        RunSettings h5Run = RunFileReader.ReadNight(Path.Combine(night, "run-01h5.toml")).Runs.Single();
        var fromCsv = RunSteps.Read(csvRun).Segments;
        var fromH5 = RunSteps.Read(h5Run).Segments;
        Assert.That(fromH5.Select(s => s with { Run = "", FirstLine = 0 }), Is.EqualTo(fromCsv.Select(s => s with { Run = "", FirstLine = 0 })));
    }

    [Test]
    public void An_hdf5_unit_attribute_that_disagrees_with_the_run_file_is_an_error()
    {
        var raw = new H5Group
        {
            ["t"] = new H5Dataset(new double[] { 0, 1 }) { Attributes = new() { ["unit"] = "ms" } },
            ["zp"] = new double[] { 1, 1 }, ["Ub"] = new double[] { 1, 1 }, ["f_pll"] = new double[] { 1, 1 },
        };
        new H5File { ["raw"] = raw }.Write(Path.Combine(Folder, "run.h5"));
        string toml = File.ReadAllText(Path.Combine(MalformedRunFiles.Folder, "_base-run.txt")).Replace("../data/good.csv", "run.h5");
        foreach (string n in new[] { "t", "zp", "Ub", "f_pll" }) toml = toml.Replace($"name = \"{n}\"", $"name = \"raw/{n}\"");
        File.WriteAllText(Path.Combine(Folder, "h5.toml"), toml);
        RunSettings run = RunFileReader.ReadNight(Path.Combine(Folder, "h5.toml")).Runs.Single();
        var e = Assert.Throws<InputException>(() => RunSteps.Read(run))!;
        Assert.That(e.Problems.Single().ToString(), Is.EqualTo($"{run.DataFile}: dataset 'raw/t' says unit 'ms', but {run.RunFile} maps it with unit 's'"));
    }

    [Test]
    public void Ramps_are_split_into_approach_and_retract_bins_at_each_bias()
    {
        var scenario = new Scenario { Runs = 1, Protocol = SimulatedProtocol.DistanceRamps, Biases = 3, SampleRate = 200, RampSpeed = 40e-9 };
        string night = Path.Combine(Folder, "ramps");
        NightSimulator.Simulate(new SimulationRequest(night, scenario, 4, false, SimulationRequest.DefaultColumns(scenario.Mode, false)));
        RunSegments r = RunSteps.Read(RunFileReader.ReadNight(night).Runs.Single());
        var approach = r.Segments.Where(s => s.Kind == SegmentKind.Approach).ToArray();
        var retract = r.Segments.Where(s => s.Kind == SegmentKind.Retract).ToArray();
        // Each of 3 biases sweeps 120 nm – 2 um both ways in 2 nm bins, the first 0.3 s (12 nm at 40 nm/s) of each
        // sweep dropped; the hold at 2 um before each approach is one reference step.
        double expectedBins = 3 * ((2000 - 120) / 2.0 - 6);
        Assert.That(approach.Length, Is.EqualTo(expectedBins).Within(0.02 * expectedBins));
        Assert.That(retract.Length, Is.EqualTo(expectedBins).Within(0.02 * expectedBins));
        var holds = r.Segments.Where(s => s.Kind == SegmentKind.Reference).ToArray();
        Assert.That(holds, Has.Length.EqualTo(3));
        // 2 s hold, 0.3 s settle, 200 samples/s: 340 samples, a few dropped or clipped, and the first two or three of
        // the ramp (within the hold tolerance of 8 readout sigmas, 0.4 nm, while the piezo moves 0.2 nm per sample).
        Assert.That(holds.Select(h => h.SamplesKept), Is.All.InRange(330, 345));
        Assert.That(r.Segments.Select(s => Math.Round(s.Bias, 3)).Distinct().Count(), Is.EqualTo(3));
        Assert.That(approach.Zip(approach.Skip(1)).Count(p => p.First.Bias == p.Second.Bias && p.Second.Piezo > p.First.Piezo), Is.Zero, "approach bins run toward the plate");
        // The bins (10 samples) are shorter than the noise's correlation; the noise model comes from the holds.
        // Injected AR(1) noise with lag-1 correlation 0.9 has integrated time (1 + 0.9)/(1 − 0.9) = 19 samples. Three
        // holds of 340 samples (about 18 correlation times each) pin it to roughly ±30% (15.4 here; 20.3 from the
        // seven holds of a default run).
        Assert.That(r.Noise.IntegratedTime, Is.InRange(0.7 * 19, 1.3 * 19));
        TestContext.Out.WriteLine($"integrated time {r.Noise.IntegratedTime:F2} samples (injected 19)");
        Assert.That(r.Warnings, Has.None.Contains("no hold"));
    }
    [Test]
    public void A_bin_without_its_glitch_keeps_its_reading_consistent_with_its_mean()
    {
        // The same simulated ramps with and without glitches (the noise draws are the same; no readout noise or
        // dropped rows, so the bins match one to one). Leaving a glitch sample out of a bin moves its mean signal by
        // slope * (the move of its mean reading) plus the left-out sample's noise / (n − 1); a reading averaged over
        // all samples instead would leave slope (p_mean − p_glitch)/(n − 1) unexplained, up to 0.3 Hz near the plate
        // against the noise's 6e-4 Hz.
        var imperfections = new Imperfections(ReadoutNoise: false, DroppedSamples: false);
        var scenario = new Scenario { Runs = 1, Protocol = SimulatedProtocol.DistanceRamps, Biases = 3, GlitchesPerHour = 3600, Imperfections = imperfections };
        RunSegments Bins(string name, Scenario sc)
        {
            string night = Path.Combine(Folder, name);
            NightSimulator.Simulate(new SimulationRequest(night, sc, 11, false, SimulationRequest.DefaultColumns(sc.Mode, false)));
            return RunSteps.Read(RunFileReader.ReadNight(night).Runs.Single());
        }
        var with = Bins("glitches", scenario).Segments;
        var without = Bins("clean", scenario with { Imperfections = imperfections with { Glitches = false } }).Segments;
        Assert.That(with, Has.Count.EqualTo(without.Count));
        var normalised = new List<double>();
        for (int i = 1; i + 1 < with.Count; i++)
        {
            SegmentStatistics g = with[i], c = without[i];
            bool sameSweep = without[i - 1].Kind == c.Kind && without[i + 1].Kind == c.Kind && without[i - 1].Bias == c.Bias && without[i + 1].Bias == c.Bias;
            if (g.Clipped == 0 || c.Clipped != 0 || !sameSweep || c.Kind is not (SegmentKind.Approach or SegmentKind.Retract)) continue;
            double slope = (without[i + 1].Mean - without[i - 1].Mean) / (without[i + 1].Piezo - without[i - 1].Piezo);
            double residual = (g.Mean - c.Mean) - slope * (g.Piezo - c.Piezo);
            normalised.Add(residual / (scenario.FrequencyNoise / (c.SamplesKept - 1)));
        }
        TestContext.Out.WriteLine($"{normalised.Count} bins with a glitch left out; normalised residual rms {Math.Sqrt(normalised.Average(x => x * x)):F2}, largest {normalised.Max(Math.Abs):F2}");
        Assert.That(normalised, Has.Count.GreaterThan(20));
        Assert.That(Math.Sqrt(normalised.Average(x => x * x)), Is.LessThan(2));
        Assert.That(normalised.Max(Math.Abs), Is.LessThan(6));
    }
}
