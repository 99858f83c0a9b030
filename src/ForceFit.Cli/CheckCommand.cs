using ForceFit.Core.Problems;
using ForceFit.Core.Units;
using ForceFit.Ingest;
using ForceFit.Ingest.RunFiles;

namespace ForceFit.Cli;

/// <summary>forcefit check: validates a night and prints its resolved settings.</summary>
public static class CheckCommand
{
    /// <summary>Runs the check.</summary>
    public static int Run(string[] args, TextWriter output)
    {
        if (args.Length != 1 || args[0].StartsWith('-'))
            throw new UsageException("check takes one argument: a night folder or a run's .toml file");
        NightSettings night = NightCheck.Run(args[0]);
        output.Write(SettingsTable.Render(night));
        output.WriteLine();
        output.WriteLine($"ok: {night.Runs.Count} run(s) read; every mapped column was found in its data file");
        return ExitCodes.Success;
    }
}

/// <summary>Renders resolved settings as a plain-text table: one row per setting, one column per run.</summary>
public static class SettingsTable
{
    /// <summary>The table for a night, followed by its materials and theories.</summary>
    public static string Render(NightSettings night)
    {
        var w = new StringWriter();
        RunSettings first = night.Runs[0];
        w.WriteLine($"night folder: {night.Folder}");
        if (first.NightFile is not null) w.WriteLine($"shared settings: {first.NightFile}");
        if (first.Theory.Title.Length > 0) w.WriteLine($"title: {first.Theory.Title}");
        w.WriteLine();

        var rows = new List<(string Label, Func<RunSettings, string> Value)>
        {
            ("run file", r => Path.GetFileName(r.RunFile)),
            ("data file", r => Path.GetFileName(r.DataFile)),
            ("mode", r => r.Instrument.Mode == InstrumentMode.FrequencyShift ? "frequency-shift" : "deflection"),
            ("protocol", r => r.Protocol == Protocol.VoltageSteps ? "voltage-steps" : "distance-ramps"),
            ("settle", r => Show(r.Settle, "s")),
            ("bin width", r => Show(r.BinWidth, "nm")),
            ("spring constant k", r => Auto(r.Instrument.SpringConstant, "N/m")),
            ("free frequency f0", r => r.Instrument.Mode == InstrumentMode.FrequencyShift ? Auto(r.Instrument.FreeFrequency, "Hz") : "-"),
            ("amplitude A", r => r.Instrument.Mode == InstrumentMode.FrequencyShift ? Show(r.Instrument.Amplitude, "nm") : "-"),
            ("deflection sensitivity m", r => r.Instrument.Mode == InstrumentMode.Deflection ? AutoAny(r.Instrument.DeflectionSensitivity) : "-"),
            ("deflection free S_free", r => r.Instrument.Mode == InstrumentMode.Deflection ? AutoAny(r.Instrument.DeflectionFree) : "-"),
            ("reference beyond", r => Show(r.Instrument.ReferenceBeyond, "nm")),
            ("sphere radius R", r => Show(r.Theory.Sphere.Radius, "um")),
            ("piezo scale s", r => Show(r.Piezo.Scale, "")),
            ("piezo direction", r => r.Piezo.Direction == PiezoDirection.Away ? "away" : "toward"),
            ("temperature T", r => Show(r.Theory.Surfaces.Temperature, "K")),
            ("sphere roughness", r => Show(r.Theory.Surfaces.SphereRoughness)),
            ("plate roughness", r => Show(r.Theory.Surfaces.PlateRoughness)),
            ("beyond-PFA theta", r => Show(r.Theory.Surfaces.PfaCorrection, "")),
        };
        foreach (string channel in new[] { "time", "piezo", "bias", "frequency", "deflection" })
        {
            rows.Add(($"column {channel}", r => r.Columns.Mapped().FirstOrDefault(m => m.Channel == channel) is { Column: { } c }
                ? $"{c.Name} [{(c.Unit.Symbol.Length == 0 ? "1" : c.Unit.Symbol)}]"
                : "-"));
        }
        rows.Add(("theories", r => r.Theory.Theories.Count == 0 ? "-" : string.Join(", ", r.Theory.Theories.Select(t => t.Name))));

        var table = new List<string[]>();
        table.Add(["setting", .. night.Runs.Select(r => r.Name)]);
        foreach (var (label, value) in rows) table.Add([label, .. night.Runs.Select(value)]);
        WriteAligned(w, table);

        var materials = night.Runs.SelectMany(r => r.Theory.Materials.Values).DistinctBy(m => m.Name).ToList();
        if (materials.Count > 0)
        {
            w.WriteLine();
            w.WriteLine("materials:");
            foreach (MaterialSettings m in materials) w.WriteLine("  " + Describe(m));
        }
        var theories = night.Runs.SelectMany(r => r.Theory.Theories).DistinctBy(t => t.Name).ToList();
        if (theories.Count > 0)
        {
            w.WriteLine();
            w.WriteLine("theories:");
            foreach (TheorySettings t in theories) w.WriteLine($"  {t.Name}: sphere {t.Sphere}, plate {t.Plate}");
        }
        return w.ToString();
    }

    /// <summary>One line describing a material's model and parameters.</summary>
    public static string Describe(MaterialSettings m)
    {
        var parts = new List<string> { m.Model.ToString() };
        if (m.PlasmaFrequency is { } wp) parts.Add("plasma frequency " + wp.Display("eV", 5));
        if (m.Damping is { } g) parts.Add("damping " + g.Display("eV", 4));
        if (m.Model == MaterialModel.Lorentz) parts.Add("eps_inf " + m.EpsInf.Display("", 4));
        foreach (OscillatorSettings o in m.Oscillators)
            parts.Add($"oscillator (g {o.Strength.Display("eV^2", 4)}, w {o.Frequency.Display("eV", 4)}, gamma {o.Damping.Display("eV", 4)})");
        if (m.TablePath is not null) parts.Add($"table {m.TablePath}, {m.Tail?.ToString().ToLowerInvariant()} tail");
        return $"{m.Name}: " + string.Join("; ", parts);
    }

    private static string Show(Measurement? m, string unit) => m is { } v ? v.Display(unit, 6) : "-";

    private static string Auto(Measurement? m, string unit) => m is { } v ? v.Display(unit, 6) : "auto";

    private static string AutoAny(Measurement? m) => m is { } v ? v.Display(Unit.SiOf(v.Dimension).Symbol, 6) : "auto";

    private static string Show(Roughness r) => r.HistogramPath is { } path ? Path.GetFileName(path) : Show(r.Rms, "nm");

    private static void WriteAligned(TextWriter w, List<string[]> table)
    {
        int columns = table[0].Length;
        var widths = Enumerable.Range(0, columns).Select(c => table.Max(row => row[c].Length)).ToArray();
        foreach (string[] row in table)
            w.WriteLine(string.Join("  ", row.Select((cell, c) => c == columns - 1 ? cell : cell.PadRight(widths[c]))).TrimEnd());
    }
}
