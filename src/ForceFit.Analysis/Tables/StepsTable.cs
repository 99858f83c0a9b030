using ForceFit.Ingest.RunFiles;
using ForceFit.Ingest.Steps;

namespace ForceFit.Analysis.Tables;

/// <summary>
/// tables/steps.csv (run-files.md): one row per detected step or bin with the run, kind, start and end time,
/// piezo, bias, mean signal, its uncertainty and the samples kept. The signal columns carry the mode's unit in
/// their names: mean_frequency_Hz and sigma_frequency_Hz, or mean_deflection_V and sigma_deflection_V
/// (mean_deflection and sigma_deflection for a signal without unit).
/// </summary>
public static class StepsTable
{
    /// <summary>The header for a set of runs (all of one mode).</summary>
    public static string[] Header(IReadOnlyList<RunSegments> runs)
    {
        RunSettings first = runs[0].Run;
        string signal = first.Instrument.Mode == InstrumentMode.FrequencyShift
            ? "frequency_Hz"
            : first.Columns.Deflection!.Unit.Symbol.Length == 0 ? "deflection" : "deflection_V";
        return ["run", "kind", "start_s", "end_s", "piezo_m", "bias_V", "mean_" + signal, "sigma_" + signal, "samples_kept"];
    }

    /// <summary>The rows, runs in the given order, steps in time order.</summary>
    public static IEnumerable<IReadOnlyList<string>> Rows(IReadOnlyList<RunSegments> runs) =>
        runs.SelectMany(r => r.Segments).Select(s => (IReadOnlyList<string>)
        [
            s.Run, s.Kind.ToString().ToLowerInvariant(), CsvTable.Number(s.Start), CsvTable.Number(s.End), CsvTable.Number(s.Piezo),
            CsvTable.Number(s.Bias), CsvTable.Number(s.Mean), CsvTable.Number(s.Sigma), s.SamplesKept.ToString(System.Globalization.CultureInfo.InvariantCulture),
        ]);

    /// <summary>Writes the table atomically.</summary>
    public static void Write(string path, IReadOnlyList<RunSegments> runs)
    {
        if (runs.Count == 0) throw new ArgumentException("no runs to write", nameof(runs));
        if (runs.Select(r => r.Run.Instrument.Mode).Distinct().Count() > 1)
            throw new ArgumentException("steps.csv holds runs of one mode; the night mixes frequency-shift and deflection runs");
        CsvTable.Write(path, Header(runs), Rows(runs));
    }
}
